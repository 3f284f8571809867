// Replays every kept fuzz input (Tests/fuzz/corpus: seeds; Tests/fuzz/regressions: inputs
// that once crashed or broke a promise) through the same entry points as the libFuzzer
// targets (Tests/fuzz/FuzzChecks.h), in the normal build, so a regression shows without
// clang. Common practice (libFuzzer's documentation): crash inputs become regression tests.
#include "AudioInput.h"
#include "ChainFile.h"
#include "FuzzChecks.h"
#include "NumberText.h"
#include "PluginProcessor.h"

#include <catch2/catch.hpp>

#include <cmath>
#include <cstring>
#include <initializer_list>
#include <utility>

using namespace kerf;

namespace
{

juce::Array<juce::File> keptInputs(const char* kind, const char* target)
{
    const auto dir = juce::File(KERF_SOURCE_DIR)
                         .getChildFile("Tests/fuzz")
                         .getChildFile(kind)
                         .getChildFile(target);
    auto files = dir.findChildFiles(juce::File::findFiles, false, "*");
    files.removeIf([](const juce::File& f) { return f.getFileName().startsWithChar('.'); });
    files.sort();
    return files;
}

/// Feeds every kept input of `target` to `check`; seeds must be accepted (they are valid
/// inputs), regressions may be refused, but with a message; no input may break a promise.
template <typename Check> void replay(const char* target, int minSeeds, Check check)
{
    const auto seeds = keptInputs("corpus", target);
    REQUIRE(seeds.size() >= minSeeds);
    for (const auto& kind : {"corpus", "regressions"})
        for (const auto& file : keptInputs(kind, target))
        {
            juce::MemoryBlock bytes;
            REQUIRE(file.loadFileAsData(bytes));
            const fuzz::Outcome outcome = check(bytes.getData(), bytes.getSize());
            INFO(kind << "/" << target << "/" << file.getFileName() << ": " << outcome.message
                      << outcome.violation);
            CHECK(outcome.violation.isEmpty());
            if (juce::String(kind) == "corpus")
            {
                CHECK(outcome.accepted);
                CHECK(outcome.message.isEmpty()); // audio seeds also read to their end
            }
            else
                CHECK((outcome.accepted || outcome.message.isNotEmpty()));
        }
}

/// Runs body(processor) on a fresh KerfProcessor with JUCE's GUI set up and the processor's
/// log messages (refused states) kept off the test output.
template <typename Body> void withQuietProcessor(Body body)
{
    juce::ScopedJuceInitialiser_GUI init;
    struct Quiet : juce::Logger
    {
        void logMessage(const juce::String&) override {}
    } quiet;
    juce::Logger::setCurrentLogger(&quiet);
    {
        KerfProcessor p;
        body(p);
    }
    juce::Logger::setCurrentLogger(nullptr);
}

/// The bytes of a kept regression input.
juce::MemoryBlock regressionInput(const char* target, const char* name)
{
    juce::MemoryBlock bytes;
    REQUIRE(juce::File(KERF_SOURCE_DIR)
                .getChildFile("Tests/fuzz/regressions")
                .getChildFile(target)
                .getChildFile(name)
                .loadFileAsData(bytes));
    return bytes;
}

} // namespace

TEST_CASE("fuzz replay: chain files", "[fuzz]")
{
    replay("chain_file", 4,
           [](const void* d, std::size_t n) { return fuzz::checkChainFile(d, n); });
}

TEST_CASE("fuzz replay: plugin state restore", "[fuzz]")
{
    withQuietProcessor(
        [](KerfProcessor& p)
        {
            replay("plugin_state", 2,
                   [&p](const void* d, std::size_t n) { return fuzz::checkPluginState(p, d, n); });
        });
}

TEST_CASE("fuzz replay: audio input", "[fuzz]")
{
    replay("audio_input", 6,
           [](const void* d, std::size_t n) { return fuzz::checkAudioInput(d, n); });
}

TEST_CASE("fuzz regression: a whole number too long for JUCE's JSON parser is refused", "[fuzz]")
{
    // JUCE 7.0.5 reads a number's whole part into a signed 64-bit integer without an overflow
    // check (juce_JSON.cpp); signed overflow is undefined (C++20 [expr.pre]/4) and wraps
    // in practice (arithmetic modulo 2^64): 18446744073709551617 = 2^64 + 1 would read as 1.
    const juce::String text = R"({"format": "kerf-chain", "version": 18446744073709551617,
        "stages": [{"type": "peaking", "freq_hz": 1000}]})";
    const auto r = parseChainJson(text);
    CHECK_FALSE(r.ok);
    CHECK(r.error.contains("19 or more digits"));
    // Long fractions and exponents go through JUCE's double reader and stay accepted.
    const auto fine = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages":
        [{"type": "peaking", "freq_hz": 1000.00000000000000000001, "gain_db": 1e-00000000000000000001}]})");
    CHECK(fine.ok);
}

TEST_CASE("fuzz regression: an exponent too long for JUCE's number reader is refused", "[fuzz]")
{
    // JUCE 7.0.5 adds up an exponent's significant digits in an int with no overflow check
    // (juce_CharacterFunctions.h, readDoubleValue): 6666666666 passes 2^31 - 1, undefined
    // behaviour (C++20 [expr.pre]/4) that UBSan reported from the chain-file fuzz target.
    const auto r = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages":
        [{"type": "peaking", "freq_hz": 1000, "gain_db": 1e-6666666666}]})");
    CHECK_FALSE(r.ok);
    CHECK(r.error.contains("exponent has 10 or more digits"));
    // Nine significant digits fit an int (999999999 < 2^31 - 1); leading zeros never count.
    const auto nine = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages":
        [{"type": "peaking", "freq_hz": 1000, "gain_db": 1e-999999999, "q": 2E+00000000000000001}]})");
    REQUIRE(nine.ok);
    CHECK(nine.chain.stages[0].gainDb == 0.0);
    CHECK(nine.chain.stages[0].q == 20.0);
}

TEST_CASE("fuzz regression: what JUCE's JSON parser misreads after a minus sign is refused",
          "[fuzz]")
{
    // JUCE 7.0.5 (juce_JSON.cpp, parseAny/parseNumber) takes the character after '-' as the
    // first digit whatever it is: "-x" reads as -('x' - '0') = -72, and a letter or NUL
    // followed by 18 digits overflows int64 (C++20 [expr.pre]/4), which UBSan reported.
    const auto minusLetter = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages":
        [{"type": "peaking", "freq_hz": 1000, "gain_db": -x}]})");
    CHECK_FALSE(minusLetter.ok);
    CHECK(minusLetter.error.contains("minus sign not followed by a digit"));
    // White space after the sign stays as JUCE reads it (RFC 8259 would refuse it; common
    // practice to keep what earlier Kerf accepted).
    const auto spaced = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages":
        [{"type": "peaking", "freq_hz": 1000, "gain_db": - 6, "q": 1e-1}]})");
    REQUIRE(spaced.ok);
    CHECK(spaced.chain.stages[0].gainDb == -6.0);
    // A NUL ends a JUCE string, but the parser reads on past it: bytes with a NUL are refused.
    const char withNul[] = "{\"format\": \"kerf-chain\", \"version\": -\0"
                           "1234567890123456789}";
    const auto nul = parseChainBytes(withNul, sizeof(withNul) - 1);
    CHECK_FALSE(nul.ok);
    CHECK(nul.error.contains("NUL character at byte 37"));
    // UTF-16 with its byte-order mark still reads (JUCE's text stream reading).
    const juce::String text = R"({"format": "kerf-chain", "version": 1, "stages":
        [{"type": "peaking", "freq_hz": 1000, "gain_db": -3}]})";
    juce::MemoryOutputStream utf16;
    utf16.writeByte(static_cast<char>(0xff));
    utf16.writeByte(static_cast<char>(0xfe));
    for (const auto c : text)
        utf16.writeShort(static_cast<short>(c)); // little-endian
    const auto wide = parseChainBytes(utf16.getData(), utf16.getDataSize());
    REQUIRE(wide.ok);
    CHECK(wide.chain.stages[0].gainDb == -3.0);
    // Nesting: JUCE recurses once per level; a chain file needs five at most.
    juce::String deep = R"({"format": "kerf-chain", "version": 1, "stages": [], "x": )";
    deep << juce::String::repeatedString("[", 40) << juce::String::repeatedString("]", 40) << "}";
    const auto nested = parseChainJson(deep);
    CHECK_FALSE(nested.ok);
    CHECK(nested.error.contains("nested more than 32 deep"));
}

TEST_CASE("fuzz regression: names beyond U+FFFF and malformed UTF-8 in chain files", "[fuzz]")
{
    // U+1F3B8 in UTF-8 (RFC 3629: F0 9F 8E B8). JUCE's JSON::toString wrote it as the escaped
    // surrogate pair \uD83C\uDFB8, which JUCE's parser read back as two characters.
    const juce::String guitar = juce::String::charToString(static_cast<juce::juce_wchar>(0x1f3b8));
    dsp::ChainSpec chain;
    const auto text = chainToJson(chain, "Stage left " + guitar + " \"loud\"\tmix");
    const auto back = parseChainJson(text);
    REQUIRE(back.ok);
    CHECK(back.name == "Stage left " + guitar + " \"loud\"\tmix");
    CHECK(chainToJson(back.chain, back.name) == text);
    // Written by another tool as an escaped pair (RFC 8259, section 7): joined on reading;
    // a lone surrogate becomes U+FFFD (RFC 2781, section 2.2).
    const auto escaped = parseChainJson(
        R"({"format": "kerf-chain", "version": 1, "name": "a\ud83c\udfb8b\ud83cc", "stages": []})");
    REQUIRE(escaped.ok);
    CHECK(escaped.name == "a" + guitar + "b" +
                              juce::String::charToString(static_cast<juce::juce_wchar>(0xfffd)) +
                              "c");
    // A lone 0xff byte is no UTF-8 (RFC 3629, section 4): refused before JUCE steps over it.
    const char bad[] =
        "{\"format\": \"kerf-chain\", \"version\": 1, \"name\": \"\xff\", \"stages\": []}";
    const auto refused = parseChainBytes(bad, sizeof(bad) - 1);
    CHECK_FALSE(refused.ok);
    CHECK(refused.error.contains("not UTF-8 text"));
}

TEST_CASE("readNumber reads numbers like JUCE, without its overflow", "[fuzz]")
{
    // Ordinary texts: the same value as juce::String::getDoubleValue (JUCE 7.0.5), whose
    // reading follows strtod's decimal form (ISO C 7.22.1.3): white space, sign, digits with
    // one point, an optional exponent; the rest of the text is ignored; no number reads 0.
    for (const char* text :
         {"0",   "1",    "-2.5",   "  +3.25", "1000.5 Hz", "5.",      ".5",
          "1e3", "2E-2", "1e",     "1e+",     "7e-x",      "-0.0001", "abc",
          "",    "-",    "12.5.7", "4.2e1ms", "0.1",       "1e308",   "6.02214076e23"})
    {
        INFO(text);
        CHECK(readNumber(text) == juce::String(text).getDoubleValue());
    }
    // Beyond JUCE's reach (ten or more exponent digits): what strtod gives for the same
    // text (ISO C 7.22.1.3: overflow gives HUGE_VAL, underflow a value no larger than the
    // smallest normal number, here 0).
    CHECK(readNumber("1e6666666666") == std::numeric_limits<double>::infinity());
    CHECK(readNumber("-1e6666666666") == -std::numeric_limits<double>::infinity());
    CHECK(readNumber("1e-6666666666") == 0.0);
    CHECK(readNumber("0e99999999999") == 0.0);
    // No hexadecimal, inf or nan text (JUCE reads those as 0; strtod would not).
    CHECK(readNumber("0x10") == 0.0);
    CHECK(readNumber("inf") == 0.0);
    CHECK(readNumber("nan") == 0.0);

    CHECK(overflowsJuceNumberReader("1e6666666666"));
    CHECK(overflowsJuceNumberReader(" -2.5E+0001234567890 dB"));
    CHECK_FALSE(overflowsJuceNumberReader("1e999999999"));
    CHECK_FALSE(overflowsJuceNumberReader("1e0000000000000000000001"));
    CHECK_FALSE(overflowsJuceNumberReader("Take e12345678901")); // not a number at all
    CHECK_FALSE(overflowsJuceNumberReader("12345678901234567890123"));
}

TEST_CASE("fuzz regression: a saved state with an overlong exponent is refused", "[fuzz]")
{
    withQuietProcessor(
        [](KerfProcessor& p)
        {
            const auto bytes =
                regressionInput("plugin_state", "exponent-overflows-juce-number-reader.state");
            p.setStateInformation(bytes.getData(), static_cast<int>(bytes.getSize()));
            CHECK(p.lastStateProblem().contains("PARAM.value"));
            CHECK(p.lastStateProblem().contains("exponent of 10 or more digits"));
        });
}

TEST_CASE("fuzz regression: a saved state whose text is not valid UTF-8 is refused", "[fuzz]")
{
    // JUCE 7.0.5's CharPointer_UTF8::operator++ skips the continuation bytes a lead byte
    // announces (0xff: three) without looking for the terminating NUL, so its XML reader ran
    // past the buffer on this input (AddressSanitizer: heap-buffer-overflow). Well-formed
    // UTF-8: RFC 3629, section 4 (0xf8-0xff never appear; continuation bytes 10xxxxxx).
    withQuietProcessor(
        [](KerfProcessor& p)
        {
            const auto bytes =
                regressionInput("plugin_state", "malformed-utf8-reads-past-juce-xml-buffer.state");
            p.setStateInformation(bytes.getData(), static_cast<int>(bytes.getSize()));
            CHECK(p.lastStateProblem().contains("not valid UTF-8"));

            // A good state, then the same with text after its NUL: refused too.
            juce::MemoryBlock good;
            p.getStateInformation(good);
            p.setStateInformation(good.getData(), static_cast<int>(good.getSize()));
            CHECK(p.lastStateProblem().isEmpty());
            juce::MemoryBlock trailing(good);
            trailing.append("<x/>", 4);
            const auto length = static_cast<juce::uint32>(trailing.getSize() - 8);
            trailing.copyFrom(&length, 4, 4); // little-endian host (x86-64, AArch64)
            p.setStateInformation(trailing.getData(), static_cast<int>(trailing.getSize()));
            CHECK(p.lastStateProblem().contains("not valid UTF-8"));
        });
}

TEST_CASE("fuzz regression: echo-estimate reads no more than the file holds", "[fuzz][cli]")
{
    // A 108-byte 8-bit WAV whose data chunk claims 0xFFFFFFF0 bytes: kerf echo-estimate once
    // allocated the header's 4.29e9 samples before reading (17 GB; std::bad_alloc under a
    // memory limit). Run under a 4 GB address-space limit so a relapse fails, not the host.
    const auto wav = juce::File(KERF_SOURCE_DIR)
                         .getChildFile("Tests/fuzz/regressions/audio_input")
                         .getChildFile("wav-header-claims-4g-samples.wav");
    REQUIRE(wav.existsAsFile());
    juce::ChildProcess kerf;
    REQUIRE(kerf.start(juce::StringArray{"/bin/sh", "-c",
                                         "ulimit -v 4000000; exec \"$0\" echo-estimate \"$1\" 2>&1",
                                         KERF_CLI_PATH, wav.getFullPathName()}));
    const auto output = kerf.readAllProcessOutput();
    // The pipe closes before the process is reaped: wait, or getExitCode() may still read 0.
    REQUIRE(kerf.waitForProcessToFinish(60000));
    INFO(output);
    CHECK(kerf.getExitCode() == 1); // README: exit status 1, a message naming the problem
    CHECK(output.contains("truncated or damaged"));
}

TEST_CASE("fuzz regression: a FLAC header claiming more samples than the file can hold",
          "[fuzz][cli]")
{
    // A 670-byte FLAC (256 samples) whose STREAMINFO claims 2^36 - 1: JUCE's reader decodes
    // silence for every claimed sample, so render would write hours of it. FLAC frames take
    // at least 8 bytes and hold at most 65535 samples (IETF RFC 9639, section 9; from memory).
    const auto flac = juce::File(KERF_SOURCE_DIR)
                          .getChildFile("Tests/fuzz/regressions/audio_input")
                          .getChildFile("flac-header-claims-68g-samples.flac");
    REQUIRE(flac.existsAsFile());
    juce::String error;
    CHECK(kerf::cli::AudioInput::open(flac, error) == nullptr);
    CHECK(error.contains("damaged"));
    // The same file with its true length (the seed it was made from) still opens.
    const auto seed =
        juce::File(KERF_SOURCE_DIR).getChildFile("Tests/fuzz/corpus/audio_input/mono-24bit.flac");
    juce::String seedError;
    const auto ok = kerf::cli::AudioInput::open(seed, seedError);
    REQUIRE(ok != nullptr);
    CHECK(ok->reader().lengthInSamples == 256);
}

TEST_CASE("audio input: metadata chunks are hidden from JUCE's readers, the audio still opens",
          "[fuzz][cli]")
{
    // Kerf uses no metadata, and JUCE 7.0.5's readers parse it without care (AudioInput.cpp,
    // walkChunks): AIFF marker ('MARK') and comment ('COMT') counts read on past their chunk
    // and the file (a 117-byte fuzz input whose 'COMT' counts 45549 comments took 0.76 s to
    // open, twenty such chunks in 262 bytes 11.5 s); a WAV cue list ('LIST' of type 'adtl')
    // whose pad byte the file lacks stalled the reader for good (the kept 289-byte file) and
    // one with entries shorter than their fixed fields read the rest of the file for each;
    // 'iXML' and 'axml' go to an XML reader that recurses per level (40000 levels crashed)
    // and loops for good on a processing instruction inside an element followed by text; an
    // AIFF 'cate' chunk shorter than its tags was read past its buffer (AddressSanitizer,
    // found by fuzzing: the kept input). Entry layouts: Audio Interchange File Format 1.3,
    // Apple Computer 1989, and Multimedia Programming Interface and Data Specifications 1.0,
    // IBM and Microsoft 1991 (from memory). Each file below, written by JUCE's own writers (a
    // general-purpose library) and then damaged in its metadata, must open with no metadata
    // read and give back exactly the samples written. A relapse hangs or crashes the test.
    juce::AudioBuffer<float> signal(1, 256);
    for (int n = 0; n < 256; ++n)
        signal.setSample(0, n, static_cast<float>(std::sin(0.05 * n) * 0.5)); // 16-bit exact
    for (int n = 0; n < 256; ++n)
        signal.setSample(0, n, std::round(signal.getSample(0, n) * 32768.0f) / 32768.0f);
    const auto write = [&signal](juce::AudioFormat& format, const juce::StringPairArray& meta)
    {
        juce::MemoryBlock out;
        std::unique_ptr<juce::AudioFormatWriter> writer(format.createWriterFor(
            new juce::MemoryOutputStream(out, false), 48000.0, 1, 16, meta, 0));
        REQUIRE(writer != nullptr);
        REQUIRE(writer->writeFromAudioSampleBuffer(signal, 0, 256));
        writer.reset();
        return out;
    };
    const auto find = [](const juce::MemoryBlock& data, const char* id)
    {
        const auto* b = static_cast<const unsigned char*>(data.getData());
        for (size_t i = 12; i + 8 <= data.getSize(); ++i)
            if (std::memcmp(b + i, id, 4) == 0)
                return i;
        return size_t{0};
    };
    const auto appendChunk =
        [](juce::MemoryBlock data, const char* id, const std::string& body, bool bigEndian)
    {
        const auto size = static_cast<juce::uint32>(body.size());
        const juce::uint32 sizeField = bigEndian ? juce::ByteOrder::swap(size) : size;
        data.append(id, 4);
        data.append(&sizeField, 4); // little-endian host
        data.append(body.data(), body.size());
        if (body.size() % 2 != 0)
            data.append("", 1);
        const auto outer = static_cast<juce::uint32>(data.getSize() - 8);
        const juce::uint32 outerField = bigEndian ? juce::ByteOrder::swap(outer) : outer;
        data.copyFrom(&outerField, 4, 4);
        return data;
    };
    const auto opensIntact = [&signal](const juce::MemoryBlock& data, const juce::String& what)
    {
        INFO(what);
        juce::String error;
        const auto in = cli::AudioInput::open(std::make_unique<juce::MemoryInputStream>(data, true),
                                              "take", error);
        INFO(error);
        REQUIRE(in != nullptr);
        CHECK(in->reader().lengthInSamples == 256);
        CHECK(in->reader().metadataValues.size() == 0); // none of it was read
        juce::AudioBuffer<float> got(1, 256);
        REQUIRE(in->read(got, 256, 0));
        for (int n = 0; n < 256; ++n)
            REQUIRE(got.getSample(0, n) == signal.getSample(0, n));
    };

    // AIFF with two markers and two comments.
    juce::StringPairArray aiffMeta;
    aiffMeta.set("NumCuePoints", "2");
    aiffMeta.set("NumCueLabels", "2");
    aiffMeta.set("NumCueNotes", "2");
    for (int i = 0; i < 2; ++i)
    {
        const juce::String n(i);
        aiffMeta.set("Cue" + n + "Identifier", juce::String(i + 1));
        aiffMeta.set("Cue" + n + "Offset", juce::String(100 * i));
        aiffMeta.set("CueLabel" + n + "Identifier", juce::String(i + 1));
        aiffMeta.set("CueLabel" + n + "Text", i == 0 ? "take 2 starts" : "door slam");
        aiffMeta.set("CueNote" + n + "Identifier", juce::String(i + 1));
        aiffMeta.set("CueNote" + n + "TimeStamp", "0");
        aiffMeta.set("CueNote" + n + "Text", i == 0 ? "host mic" : "re-record?");
    }
    juce::AiffAudioFormat aiffFormat;
    const auto aiff = write(aiffFormat, aiffMeta);
    opensIntact(aiff, "AIFF as written");
    for (const char* id : {"MARK", "COMT"})
    {
        juce::MemoryBlock damaged(aiff);
        const auto at = find(damaged, id);
        REQUIRE(at > 0);
        static_cast<unsigned char*>(damaged.getData())[at + 8] = 0xff; // count 65535
        static_cast<unsigned char*>(damaged.getData())[at + 9] = 0xff;
        opensIntact(damaged, juce::String(id) + " counting 65535");
    }
    opensIntact(appendChunk(aiff, "cate", "Ro", true), "a 2-byte 'cate' chunk");

    // WAV with two labels, a note and a region.
    juce::StringPairArray wavMeta;
    for (const auto& [key, value] : std::initializer_list<std::pair<const char*, const char*>>{
             {"NumCueLabels", "2"},
             {"CueLabel0Identifier", "1"},
             {"CueLabel0Text", "take 2 starts"},
             {"CueLabel1Identifier", "2"},
             {"CueLabel1Text", "door slam"},
             {"NumCueNotes", "1"},
             {"CueNote0Identifier", "1"},
             {"CueNote0Text", "host mic"},
             {"NumCueRegions", "1"},
             {"CueRegion0Identifier", "2"},
             {"CueRegion0SampleLength", "64"},
             {"CueRegion0Text", "breath"}})
        wavMeta.set(key, value);
    juce::WavAudioFormat wavFormat;
    const auto wav = write(wavFormat, wavMeta);
    REQUIRE(find(wav, "adtl") > 0);
    opensIntact(wav, "WAV as written");
    for (const char* entry : {"labl", "note", "ltxt"})
    {
        juce::MemoryBlock damaged(wav);
        const auto at = find(damaged, entry);
        REQUIRE(at > 0);
        static_cast<unsigned char*>(damaged.getData())[at + 4] = 2; // shorter than its fields
        opensIntact(damaged, juce::String(entry) + " of 2 bytes");
    }
    // A cue list as the last chunk, odd-sized, without its pad byte.
    juce::MemoryBlock unpadded = appendChunk(
        write(wavFormat, {}), "LIST", std::string("adtllabl\x04\0\0\0\x01\0\0\0x", 17), false);
    unpadded.setSize(unpadded.getSize() - 1); // drop the pad byte
    auto* riff = static_cast<unsigned char*>(unpadded.getData());
    const auto riffSize = static_cast<juce::uint32>(unpadded.getSize() - 8);
    riff[4] = static_cast<unsigned char>(riffSize);
    riff[5] = static_cast<unsigned char>(riffSize >> 8);
    opensIntact(unpadded, "a cue list without its pad byte");
    std::string deep;
    for (int i = 0; i < 40000; ++i)
        deep += "<a>";
    for (int i = 0; i < 40000; ++i)
        deep += "</a>";
    for (const char* id : {"iXML", "axml"})
    {
        opensIntact(appendChunk(write(wavFormat, {}), id, deep, false),
                    juce::String(id) + " nested 40000 deep");
        opensIntact(appendChunk(write(wavFormat, {}), id, "<BWFXML><?x?>take 3</BWFXML>", false),
                    juce::String(id) + " with an instruction inside an element");
    }

    // The kept inputs: the hung cue list opens (its 100 samples of silence), the others are
    // refused with a message (they have no usable format chunk).
    const auto kept =
        juce::File(KERF_SOURCE_DIR).getChildFile("Tests/fuzz/regressions/audio_input");
    juce::String error;
    const auto hung =
        cli::AudioInput::open(kept.getChildFile("wav-list-adtl-past-end-hang.wav"), error);
    REQUIRE(hung != nullptr);
    CHECK(hung->reader().lengthInSamples == 100);
    for (const char* name :
         {"aiff-comt-counts-45549-comments-slow.aiff", "aiff-cate-chunk-read-past-its-buffer.aiff"})
    {
        INFO(name);
        juce::String why;
        CHECK(cli::AudioInput::open(kept.getChildFile(name), why) == nullptr);
        CHECK(why.contains("not a readable WAV, AIFF or FLAC file"));
    }
}
