// Deeply nested XML, which JUCE 7.0.5's reader follows one call deeper per level, is refused
// before JUCE reads it: in a restored plugin state and in a WAV file's 'iXML' and 'axml'
// chunks (Source/XmlHazards.h). The counting is checked against JUCE's own reader (a
// general-purpose library) on texts shallow enough for it.
#include "AudioInput.h"
#include "Parameters.h"
#include "PluginProcessor.h"
#include "XmlHazards.h"

#include <catch2/catch.hpp>

#include <random>
#include <string>
#include <vector>

using namespace kerf;

namespace
{

/// Depth of the tree JUCE's reader builds from `text` (1 for a lone root), walked without
/// recursion; 0 when it reads no element.
int juceDepth(const std::string& text)
{
    const auto root =
        juce::parseXML(juce::String::fromUTF8(text.data(), static_cast<int>(text.size())));
    if (root == nullptr)
        return 0;
    int deepest = 0;
    std::vector<std::pair<const juce::XmlElement*, int>> pending{{root.get(), 1}};
    while (!pending.empty())
    {
        const auto [e, d] = pending.back();
        pending.pop_back();
        deepest = std::max(deepest, d);
        for (const auto* child : e->getChildIterator())
            pending.push_back({child, d + 1});
    }
    return deepest;
}

/// The nesting the scan under test counts.
int countedDepth(const std::string& text)
{
    return scanXml(text.data(), text.size(), 1 << 30).deepest;
}

/// Random XML-like text: elements, self-closing tags, quoted values holding '>', "/>" and
/// "</", comments and CDATA holding tags, text, and processing instructions if asked.
std::string randomXml(std::mt19937& rng, int depth, int maxDepth, bool instructions)
{
    auto pick = [&rng](int n) { return std::uniform_int_distribution<int>(0, n - 1)(rng); };
    static const char* const values[] = {"1", "a&gt;b", "/>", "x/>y", "</a>", "<b>", "'", ">"};
    std::string out;
    if (depth >= maxDepth)
        return out;
    // Up to three things at this level; one nested element goes on down (a spine, so the
    // text grows with the depth, not exponentially).
    const int children = pick(4);
    const int spine = pick(children + 1);
    for (int i = 0; i <= children; ++i)
    {
        if (i == spine)
        {
            out += "<e a='" + std::string(values[pick(6)]) + "'>" +
                   randomXml(rng, depth + 1, maxDepth, instructions) + "</e>";
            continue;
        }
        switch (pick(9))
        {
        case 0:
            out += "<!-- <c><c><c> -->";
            break;
        case 1:
            out += "<![CDATA[<d><d></d>]]>";
            break;
        case 2:
            out += instructions ? "<?pi <e> ?>" : "<!-- ?> -->";
            break;
        case 3:
            out += "some text";
            break;
        case 4:
            out += "<s v=\"" + std::string(values[pick(8)]) + "\"/>";
            break;
        default:
        {
            const char quote = pick(2) ? '"' : '\'';
            std::string value = values[pick(8)];
            if (value.find(quote) != std::string::npos)
                value = "q";
            out += "<f a=" + std::string(1, quote) + value + std::string(1, quote) + "><g/></f>";
            break;
        }
        }
    }
    return out;
}

} // namespace

TEST_CASE("xml nesting: the count is never below the depth JUCE's reader reaches", "[xml]")
{
    // Reference: juce::parseXML's tree, on random texts shallow enough for its recursion.
    std::mt19937 rng(20261203);
    int deepest = 0, withInstruction = 0;
    for (int trial = 0; trial < 2000; ++trial)
    {
        const int maxDepth = 1 + trial % 24;
        std::string text = "<root>" + randomXml(rng, 1, maxDepth, trial % 4 == 0) + "</root>";
        if (trial % 5 == 0)
            text += "</x></x><late><late><late></late></late></late>"; // after the root ends
        INFO(text);
        // JUCE's reader would loop for good on an instruction inside an element (below).
        const bool instruction = text.find("<?") != std::string::npos;
        CHECK(scanXml(text.data(), text.size(), 1 << 30).instructionInside == instruction);
        if (instruction)
        {
            ++withInstruction;
            continue;
        }
        const int juce = juceDepth(text);
        CHECK(juce >= 1);
        CHECK(countedDepth(text) >= juce);
        deepest = std::max(deepest, juce);
    }
    CHECK(deepest >= 15); // the texts did nest
    CHECK(withInstruction > 100);
    CHECK(withInstruction <= 500);
    // Where JUCE stops reading (a second root, or text after the end), counting goes on, so
    // it may count more, never less: "<a/><b><b><b>" is one level to JUCE.
    CHECK(countedDepth("<a/><b><b><b>") == 3);
}

TEST_CASE("xml nesting: well-formed text written by JUCE counts exactly its depth", "[xml]")
{
    // So real states and metadata are not refused for nesting they do not have.
    for (int depth : {1, 2, 3, 10, 256, 257})
    {
        juce::XmlElement root("root");
        root.setAttribute("note", "a > b, c/> d, </e>");
        auto* at = &root;
        for (int i = 1; i < depth; ++i)
        {
            at->createNewChildElement("leaf")->setAttribute("v", i); // self-closing sibling
            at->addTextElement("x < y");
            at = at->createNewChildElement("level");
        }
        const auto text = root.toString().toStdString();
        INFO(depth);
        CHECK(juceDepth(text) == depth);
        CHECK(countedDepth(text) == depth);
        CHECK((xmlHazard(text.data(), text.size()) != nullptr) == (depth > 256));
    }
}

TEST_CASE("plugin: a saved state JUCE's reader cannot safely read is refused", "[plugin][xml]")
{
    // JUCE's reader recurses once per level: a state nested 100000 deep exhausted the stack
    // (AddressSanitizer: stack-overflow) instead of being refused.
    juce::ScopedJuceInitialiser_GUI init;
    KerfProcessor p;
    p.state().getParameter(ids::slotGain(2))->setValueNotifyingHost(0.8f);
    std::string text = "<KerfState stateVersion=\"1\">";
    for (int i = 0; i < 100000; ++i)
        text += "<a>";
    for (int i = 0; i < 100000; ++i)
        text += "</a>";
    text += "</KerfState>";
    juce::MemoryBlock state;
    const juce::uint32 header[2] = {0x21324356, static_cast<juce::uint32>(text.size() + 1)};
    state.append(header, sizeof(header)); // JUCE's binary wrapping (little-endian host)
    state.append(text.c_str(), text.size() + 1);
    p.setStateInformation(state.getData(), static_cast<int>(state.getSize()));
    CHECK(p.lastStateProblem().contains("elements nested more than 256 deep"));
    CHECK(p.state().getRawParameterValue(ids::slotGain(2))->load() == 0.0f);
    // JUCE's reader loops for good on a processing instruction inside an element that text
    // follows (XmlDocument::readChildElements steps back to before it to read the text).
    const std::string stall = "<KerfState stateVersion=\"1\"><?x?>take 3</KerfState>";
    juce::MemoryBlock stalled;
    const juce::uint32 stallHeader[2] = {0x21324356, static_cast<juce::uint32>(stall.size() + 1)};
    stalled.append(stallHeader, sizeof(stallHeader));
    stalled.append(stall.c_str(), stall.size() + 1);
    p.setStateInformation(stalled.getData(), static_cast<int>(stalled.getSize()));
    CHECK(p.lastStateProblem().contains("a processing instruction inside an element"));
    // A state the plugin writes still restores.
    p.state().getParameter(ids::slotGain(2))->setValueNotifyingHost(0.8f);
    juce::MemoryBlock good;
    p.getStateInformation(good);
    KerfProcessor q;
    q.setStateInformation(good.getData(), static_cast<int>(good.getSize()));
    CHECK(q.lastStateProblem().isEmpty());
    CHECK(q.state().getRawParameterValue(ids::slotGain(2))->load() ==
          p.state().getRawParameterValue(ids::slotGain(2))->load());
}

TEST_CASE("audio input: XML metadata JUCE's reader cannot safely read is refused", "[cli][xml]")
{
    // JUCE's WAV reader parses 'iXML' and 'axml' chunks: one nested 40000 deep crashed
    // kerf render (segmentation fault on the main thread's 8 MiB stack); one holding a
    // processing instruction inside an element, then text, hung it.
    juce::MemoryBlock wav;
    {
        juce::WavAudioFormat format;
        std::unique_ptr<juce::AudioFormatWriter> writer(format.createWriterFor(
            new juce::MemoryOutputStream(wav, false), 48000.0, 1, 16, {}, 0));
        REQUIRE(writer != nullptr);
        juce::AudioBuffer<float> silence(1, 256);
        silence.clear();
        REQUIRE(writer->writeFromAudioSampleBuffer(silence, 0, 256));
    }
    const auto withChunk = [&wav](const char* id, const std::string& body)
    {
        juce::MemoryBlock out(wav);
        const auto size = static_cast<juce::uint32>(body.size());
        out.append(id, 4);
        out.append(&size, 4); // little-endian host
        out.append(body.data(), body.size());
        if (body.size() % 2 != 0)
            out.append("", 1);
        const auto riff = static_cast<juce::uint32>(out.getSize() - 8);
        out.copyFrom(&riff, 4, 4);
        return out;
    };
    const auto open = [](const juce::MemoryBlock& data, juce::String& why)
    {
        return cli::AudioInput::open(std::make_unique<juce::MemoryInputStream>(data, true),
                                     "take.wav", why);
    };
    std::string deep, shallow = "<BWFXML><IXML_VERSION>2.1</IXML_VERSION><NOTE>room B</NOTE>"
                                "</BWFXML>";
    for (int i = 0; i < 40000; ++i)
        deep += "<a>";
    for (int i = 0; i < 40000; ++i)
        deep += "</a>";
    for (const char* id : {"iXML", "axml"})
    {
        INFO(id);
        juce::String why;
        CHECK(open(withChunk(id, deep), why) == nullptr);
        CHECK(why.contains("its '" + juce::String(id) +
                           "' chunk holds XML with elements nested more than 256 deep"));
        juce::String stallWhy; // JUCE's reader looped for good on this one
        CHECK(open(withChunk(id, "<BWFXML><?x?>take 3</BWFXML>"), stallWhy) == nullptr);
        CHECK(stallWhy.contains("chunk holds XML with a processing instruction inside an element"));
        juce::String okWhy;
        const auto ok = open(withChunk(id, shallow), okWhy);
        INFO(okWhy);
        REQUIRE(ok != nullptr);
        CHECK(ok->reader().lengthInSamples == 256);
    }
}
