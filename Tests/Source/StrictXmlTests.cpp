// A saved state reaches JUCE 7.0.5's XML reader only as plain XML (Source/StrictXml.h): the
// reader recurses once per level of nesting and loops for good on some lenient texts.
// Source: the check is compared with JUCE's own reader (a general-purpose library) on what
// it accepts, and with XML 1.0 (W3C Recommendation, 5th edition, 2008; section numbers
// below from memory) on what it refuses.
#include "Parameters.h"
#include "PluginProcessor.h"
#include "StrictXml.h"
#include "UserPresets.h"

#include <catch2/catch.hpp>

#include <algorithm>
#include <cstring>
#include <iterator>
#include <random>
#include <string>
#include <vector>

using namespace kerf;

namespace
{

/// Depth of the elements of the tree JUCE's reader builds from `text` (1 for a lone root),
/// walked without recursion; 0 when it reads no element.
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
            if (!child->isTextElement()) // text and CDATA are no level
                pending.push_back({child, d + 1});
    }
    return deepest;
}

/// Random well-formed XML: nested elements (one of them going on down, so the text grows
/// with the depth), self-closing tags, quoted values holding '>' and references, text with
/// references, comments and CDATA holding markup.
std::string randomXml(std::mt19937& rng, int depth, int maxDepth)
{
    auto pick = [&rng](int n) { return std::uniform_int_distribution<int>(0, n - 1)(rng); };
    static const char* const values[] = {"1", "a &gt; b", "x > y", "&amp;&#60;&#x3e;", "", "'"};
    std::string out;
    if (depth >= maxDepth)
        return out;
    const int children = pick(4);
    const int spine = pick(children + 1);
    for (int i = 0; i <= children; ++i)
    {
        if (i == spine)
        {
            out += "<e a=\"" + std::string(values[pick(6)]) + "\" b='2'>" +
                   randomXml(rng, depth + 1, maxDepth) + "</e >";
            continue;
        }
        switch (pick(5))
        {
        case 0:
            out += "<!-- <c><?x?> -->";
            break;
        case 1:
            out += "<![CDATA[<d><?x?></d>]]>";
            break;
        case 2:
            out += " take &lt;3&gt; &#233; ";
            break;
        default:
            out += "<s v=\"" + std::string(values[pick(6)]) + "\"/>";
            break;
        }
    }
    return out;
}

/// One random change that may or may not keep the text plain XML.
std::string mutate(std::mt19937& rng, std::string text)
{
    auto pick = [&rng](std::size_t n)
    { return std::uniform_int_distribution<std::size_t>(0, n - 1)(rng); };
    static const char* const inserts[] = {
        "<?x?>",        "<",   "&", "&bogus;", "\"",      "/>", "</e>",
        "<!DOCTYPE e>", "<e>", "'", "&#;",     "<!---->", "x"};
    const std::size_t at = pick(text.size() + 1);
    switch (pick(3))
    {
    case 0:
        text.insert(at, inserts[pick(std::size(inserts))]);
        break;
    case 1:
        if (at < text.size())
            text.erase(at, 1 + pick(3));
        break;
    default:
        if (at < text.size())
            text[at] = "<>\"'/&?! ="[pick(10)];
        break;
    }
    return text;
}

} // namespace

TEST_CASE("plain xml: what it accepts, JUCE's reader reads to the same depth", "[xml]")
{
    std::mt19937 rng(20261203);
    int accepted = 0, refused = 0, deepest = 0;
    for (int trial = 0; trial < 3000; ++trial)
    {
        const int maxDepth = 1 + trial % 24;
        std::string text = "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<root>" +
                           randomXml(rng, 1, maxDepth) + "</root>\n";
        const bool plain = trial % 3 == 0;
        if (!plain)
            for (int m = 1 + trial % 3; m > 0; --m)
                text = mutate(rng, text);
        INFO(text);
        int depth = 0;
        const auto problem = plainXmlProblem(text.data(), text.size(), kMaxXmlNesting, &depth);
        if (plain)
            CHECK(problem.empty()); // well-formed XML 1.0 of the plain form
        if (!problem.empty())
        {
            ++refused; // JUCE's reader is not run: it might not return
            continue;
        }
        ++accepted;
        CHECK(juceDepth(text) == depth);
        deepest = std::max(deepest, depth);
    }
    CHECK(accepted > 1000);
    CHECK(refused > 1000); // the changes did break texts
    CHECK(deepest >= 20);
}

TEST_CASE("plain xml: what XML 1.0 or JUCE's reader cannot take is refused", "[xml]")
{
    // Not well-formed (XML 1.0, sections 2.1, 2.3, 2.4, 2.5, 3.1) or outside the plain form.
    for (const char* text :
         {"", "   ", "<a>", "<a></b>", "<a/><b/>", "<a/>text", "<a b=1/>", "<a b=\"<\"/>",
          "<a b=\"1\"c=\"2\"/>", "<a>&bogus;</a>", "<a>&#;</a>", "<a>&#x12345678901;</a>",
          // Character references to no Unicode scalar value: JUCE's reader would write a lead
          // byte announcing more bytes than follow (&#xFFFFFFFF;).
          "<a b=\"&#xFFFFFFFF;\"/>", "<a>&#x110000;</a>", "<a>&#0;</a>", "<a>&#xD800;</a>",
          "<a><!-- open</a>", "<a><![CDATA[open</a>", "<!DOCTYPE a><a/>", "<a></a ", "<1a/>",
          "<a b=\"1\" b2/>", "<?xml version=\"1.0\"?><?pi?><a/>", "<a><b></a></b>",
          // JUCE's reader loops for good on these (an instruction inside an element that
          // text follows), so plainness must refuse them:
          "<a><?x?>text</a>", "<a> <?x?> &amp;</a>",
          "<KerfState stateVersion=\"1\"><?x?>t</KerfState>"})
    {
        INFO(text);
        CHECK_FALSE(plainXmlProblem(text, std::strlen(text)).empty());
    }
    // Nesting: 256 levels pass, 257 do not.
    for (const int depth : {256, 257})
    {
        std::string text;
        for (int i = 0; i < depth; ++i)
            text += "<a>";
        for (int i = 0; i < depth; ++i)
            text += "</a>";
        INFO(depth);
        int got = 0;
        const auto problem = plainXmlProblem(text.data(), text.size(), kMaxXmlNesting, &got);
        CHECK(problem.empty() == (depth <= 256));
        if (problem.empty())
            CHECK(got == 256);
        else
            CHECK(problem == "elements nested more than 256 deep");
    }
    // Up to the first NUL only (what JUCE reads of a saved state's text).
    const char withNul[] = "<a/>\0<b>";
    CHECK(plainXmlProblem(withNul, sizeof(withNul) - 1).empty());
}

TEST_CASE("plain xml: text JUCE writes passes at its own depth", "[xml]")
{
    // So no state Kerf writes is refused: JUCE escapes '<', '&' and quotes in values and text.
    for (int depth : {1, 2, 3, 10, 256})
    {
        juce::XmlElement root("root");
        // With a control character and a noncharacter (U+FFFE), which JUCE writes as
        // character references (a fuzzed state carried one: it restored, then its saved
        // copy did not, until such references were allowed).
        root.setAttribute("note", juce::String::fromUTF8("a > b, c/> d, </e> & \"f\" 'g' "
                                                         "\xc3\xa9 \x01 \xef\xbf\xbe"));
        auto* at = &root;
        for (int i = 1; i < depth; ++i)
        {
            at->createNewChildElement("leaf")->setAttribute("v", i);
            at->addTextElement("x < y & z");
            at = at->createNewChildElement("level");
        }
        const auto text = root.toString().toStdString();
        REQUIRE(text.find("&#1;") != std::string::npos);
        REQUIRE(text.find("&#65534;") != std::string::npos);
        INFO(depth);
        INFO(text);
        int got = 0;
        CHECK(plainXmlProblem(text.data(), text.size(), kMaxXmlNesting, &got) == "");
        CHECK(got == depth);
        CHECK(juceDepth(text) == depth);
    }
}

TEST_CASE("plugin: a saved state whose XML is not plain is refused", "[plugin][xml]")
{
    juce::ScopedJuceInitialiser_GUI init;
    KerfProcessor p;
    const auto restore = [&p](const std::string& text)
    {
        juce::MemoryBlock state;
        const juce::uint32 header[2] = {0x21324356, static_cast<juce::uint32>(text.size() + 1)};
        state.append(header, sizeof(header)); // JUCE's binary wrapping (little-endian host)
        state.append(text.c_str(), text.size() + 1);
        p.state().getParameter(ids::slotGain(2))->setValueNotifyingHost(0.8f);
        p.setStateInformation(state.getData(), static_cast<int>(state.getSize()));
        CHECK(p.state().getRawParameterValue(ids::slotGain(2))->load() == 0.0f);
        return p.lastStateProblem();
    };
    // JUCE's reader recursed 100000 deep (AddressSanitizer: stack-overflow).
    std::string deep = "<KerfState stateVersion=\"1\">";
    for (int i = 0; i < 100000; ++i)
        deep += "<a>";
    for (int i = 0; i < 100000; ++i)
        deep += "</a>";
    deep += "</KerfState>";
    CHECK(restore(deep).contains("its XML has elements nested more than 256 deep"));
    // JUCE's reader looped for good.
    CHECK(restore("<KerfState stateVersion=\"1\"><?x?>take 3</KerfState>")
              .contains("its XML has an element without a name at byte"));
    // The fuzzed state that found its way to that loop past an earlier, looser check.
    const auto kept = juce::File(KERF_SOURCE_DIR)
                          .getChildFile("Tests/fuzz/regressions/plugin_state")
                          .getChildFile("state-instruction-inside-element-hang.bin");
    juce::MemoryBlock fuzzed;
    REQUIRE(kept.loadFileAsData(fuzzed));
    p.setStateInformation(fuzzed.getData(), static_cast<int>(fuzzed.getSize()));
    CHECK(p.lastStateProblem().contains("its XML has"));
    // A state the plugin writes, with both comparison slots, still restores.
    p.state().getParameter(ids::slotGain(2))->setValueNotifyingHost(0.8f);
    juce::MemoryBlock good;
    p.getStateInformation(good);
    KerfProcessor q;
    q.setStateInformation(good.getData(), static_cast<int>(good.getSize()));
    CHECK(q.lastStateProblem().isEmpty());
    CHECK(q.state().getRawParameterValue(ids::slotGain(2))->load() ==
          p.state().getRawParameterValue(ids::slotGain(2))->load());
}

TEST_CASE("standalone: a settings file whose XML is not plain is set aside", "[xml]")
{
    // JUCE's PropertiesFile reads the standalone app's settings at every start with the same
    // lenient reader: a damaged file would hang or crash every start. Setting a damaged
    // settings file aside and starting fresh is common practice.
    juce::ScopedJuceInitialiser_GUI init;
    const auto dir = juce::File::getSpecialLocation(juce::File::tempDirectory)
                         .getNonexistentChildFile("kerf-settings-test", "", false);
    REQUIRE(dir.createDirectory());
    juce::PropertiesFile::Options options;
    options.applicationName = "Kerf";
    options.filenameSuffix = ".settings";
    options.folderName = dir.getFullPathName();
    const auto file = options.getDefaultFile();
    {
        // As JUCE writes it (a general-purpose library): kept as it is.
        juce::PropertiesFile written(options);
        written.setValue("shouldMuteInput", false);
        written.setValue("filterState", "AAAA+/==");
        REQUIRE(written.saveIfNeeded());
    }
    REQUIRE(file.existsAsFile());
    const auto before = file.loadFileAsString();
    CHECK(setAsideUnplainSettings(file).isEmpty());
    CHECK(file.loadFileAsString() == before);
    // Damaged: set aside, so JUCE starts from fresh settings.
    const auto aside = file.getSiblingFile(file.getFileName() + ".damaged");
    for (const std::string& damaged :
         {std::string("<?xml version=\"1.0\"?>\n<PROPERTIES><?x?>t</PROPERTIES>"),
          std::string(5000, '<')})
    {
        REQUIRE(file.replaceWithData(damaged.data(), damaged.size()));
        const auto note = setAsideUnplainSettings(file);
        INFO(note);
        CHECK(note.contains("moved to " + aside.getFullPathName()));
        CHECK_FALSE(file.exists());
        CHECK(aside.loadFileAsString().toStdString() == damaged);
        juce::PropertiesFile fresh(options); // what the app then reads: nothing, at once
        CHECK_FALSE(fresh.containsKey("shouldMuteInput"));
    }
    CHECK(setAsideUnplainSettings(file).isEmpty()); // no file: nothing to do
    dir.deleteRecursively();
}
