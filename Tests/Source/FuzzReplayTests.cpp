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

#include <cstring>

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

TEST_CASE("fuzz regression: AIFF markers and comments counted beyond their chunk are refused",
          "[fuzz]")
{
    // JUCE 7.0.5's AIFF reader reads as many markers ('MARK') or comments ('COMT') as a
    // chunk's 16-bit count says, past the chunk and the file's end, making strings for each:
    // a 117-byte input whose second 'COMT' chunk counts 45549 comments took 0.76 s to open
    // (found by fuzzing), twenty such chunks in 262 bytes 11.5 s. Each marker and each
    // comment takes at least 8 bytes (Audio Interchange File Format 1.3, Apple Computer 1989,
    // "Marker Chunk" and "Comments Chunk"; from memory).
    const auto kept = juce::File(KERF_SOURCE_DIR)
                          .getChildFile("Tests/fuzz/regressions/audio_input")
                          .getChildFile("aiff-comt-counts-45549-comments-slow.aiff");
    REQUIRE(kept.existsAsFile());
    juce::String error;
    CHECK(cli::AudioInput::open(kept, error) == nullptr);
    CHECK(error.contains("'COMT' chunk lists 222 comments where it has room for 2"));

    // A file JUCE's own AIFF writer makes with two markers and two comments (a general-
    // purpose library's writer, so the counts and sizes are its reading of the format).
    juce::StringPairArray meta;
    meta.set("NumCuePoints", "2");
    meta.set("NumCueLabels", "2");
    meta.set("NumCueNotes", "2");
    for (int i = 0; i < 2; ++i)
    {
        const juce::String n(i);
        meta.set("Cue" + n + "Identifier", juce::String(i + 1));
        meta.set("Cue" + n + "Offset", juce::String(100 * i));
        meta.set("CueLabel" + n + "Identifier", juce::String(i + 1));
        meta.set("CueLabel" + n + "Text", i == 0 ? "take 2 starts" : "door slam");
        meta.set("CueNote" + n + "Identifier", juce::String(i + 1));
        meta.set("CueNote" + n + "TimeStamp", "0");
        meta.set("CueNote" + n + "Text", i == 0 ? "host mic" : "re-record?");
    }
    juce::MemoryBlock aiff;
    {
        juce::AiffAudioFormat format;
        std::unique_ptr<juce::AudioFormatWriter> writer(format.createWriterFor(
            new juce::MemoryOutputStream(aiff, false), 48000.0, 1, 16, meta, 0));
        REQUIRE(writer != nullptr);
        juce::AudioBuffer<float> silence(1, 256);
        silence.clear();
        REQUIRE(writer->writeFromAudioSampleBuffer(silence, 0, 256));
    }
    const auto bytes = static_cast<unsigned char*>(aiff.getData());
    const auto find = [&](const char* id)
    {
        for (size_t i = 12; i + 10 <= aiff.getSize(); ++i)
            if (std::memcmp(bytes + i, id, 4) == 0)
                return i;
        return size_t{0};
    };
    const auto mark = find("MARK"), comt = find("COMT");
    REQUIRE(mark > 0);
    REQUIRE(comt > 0);
    REQUIRE(bytes[mark + 9] == 2); // counts as written: two of each
    REQUIRE(bytes[comt + 9] == 2);
    const auto reopen = [&](const juce::MemoryBlock& data, juce::String& why)
    {
        return cli::AudioInput::open(std::make_unique<juce::MemoryInputStream>(data, true),
                                     "test.aiff", why);
    };
    juce::String okError;
    const auto ok = reopen(aiff, okError);
    INFO(okError);
    REQUIRE(ok != nullptr);
    CHECK(ok->reader().lengthInSamples == 256);
    CHECK(ok->reader().metadataValues["CueLabel1Text"] == "door slam");
    CHECK(ok->reader().metadataValues["CueNote0Text"] == "host mic");
    for (const auto at : {mark, comt})
    {
        juce::MemoryBlock damaged(aiff);
        auto* b = static_cast<unsigned char*>(damaged.getData());
        b[at + 8] = 0xff; // count 65535 in the same chunk
        b[at + 9] = 0xff;
        juce::String why; // refused before JUCE's reader sees the file
        CHECK(reopen(damaged, why) == nullptr);
        INFO(why);
        CHECK(why.contains(at == mark ? "'MARK' chunk lists 65535 markers where it has room for"
                                      : "'COMT' chunk lists 65535 comments where it has room for"));
    }
}

TEST_CASE("WAV cue lists that stall or slow JUCE's reader are refused", "[fuzz]")
{
    // JUCE 7.0.5's WAV reader walks a 'LIST' chunk of type 'adtl' up to the chunk's end
    // plus its pad byte, so a chunk whose pad byte the file lacks left its walk at the end
    // of the file for good (the kept 289-byte file hung kerf render); and a 'labl' or 'note'
    // shorter than its 4-byte cue id, or an 'ltxt' shorter than its 20 bytes of fields, makes
    // it read the rest of the file for that entry. Entry layouts: Multimedia Programming
    // Interface and Data Specifications 1.0, IBM and Microsoft 1991, "Associated Data List"
    // (from memory).
    const auto kept = juce::File(KERF_SOURCE_DIR)
                          .getChildFile("Tests/fuzz/regressions/audio_input")
                          .getChildFile("wav-list-adtl-past-end-hang.wav");
    REQUIRE(kept.existsAsFile());
    juce::String error;
    CHECK(cli::AudioInput::open(kept, error) == nullptr);
    CHECK(error.contains("its 'LIST' chunk runs past the end of the file"));

    // A file JUCE's own WAV writer makes with two labels, a note and a region.
    juce::StringPairArray meta;
    meta.set("NumCueLabels", "2");
    meta.set("CueLabel0Identifier", "1");
    meta.set("CueLabel0Text", "take 2 starts");
    meta.set("CueLabel1Identifier", "2");
    meta.set("CueLabel1Text", "door slam");
    meta.set("NumCueNotes", "1");
    meta.set("CueNote0Identifier", "1");
    meta.set("CueNote0Text", "host mic");
    meta.set("NumCueRegions", "1");
    meta.set("CueRegion0Identifier", "2");
    meta.set("CueRegion0SampleLength", "64");
    meta.set("CueRegion0Text", "breath");
    juce::MemoryBlock wav;
    {
        juce::WavAudioFormat format;
        std::unique_ptr<juce::AudioFormatWriter> writer(format.createWriterFor(
            new juce::MemoryOutputStream(wav, false), 48000.0, 1, 16, meta, 0));
        REQUIRE(writer != nullptr);
        juce::AudioBuffer<float> silence(1, 256);
        silence.clear();
        REQUIRE(writer->writeFromAudioSampleBuffer(silence, 0, 256));
    }
    const auto find = [&](const char* id)
    {
        const auto* b = static_cast<const unsigned char*>(wav.getData());
        for (size_t i = 12; i + 8 <= wav.getSize(); ++i)
            if (std::memcmp(b + i, id, 4) == 0)
                return i;
        return size_t{0};
    };
    REQUIRE(find("adtl") > 0);
    const auto reopen = [&](const juce::MemoryBlock& data, juce::String& why)
    {
        return cli::AudioInput::open(std::make_unique<juce::MemoryInputStream>(data, true),
                                     "test.wav", why);
    };
    juce::String okError;
    const auto ok = reopen(wav, okError);
    INFO(okError);
    REQUIRE(ok != nullptr);
    CHECK(ok->reader().lengthInSamples == 256);
    CHECK(ok->reader().metadataValues["CueLabel1Text"] == "door slam");
    CHECK(ok->reader().metadataValues["CueNote0Text"] == "host mic");
    CHECK(ok->reader().metadataValues["CueRegion0Text"] == "breath");

    struct Cut
    {
        const char* entry;
        unsigned char length;
        const char* message;
    };
    for (const Cut& cut : {Cut{"labl", 0, "a 'labl' entry of 0 bytes, shorter than its 4-byte"},
                           Cut{"note", 3, "a 'note' entry of 3 bytes, shorter than its 4-byte"},
                           Cut{"ltxt", 12, "an 'ltxt' entry of 12 bytes, shorter than its 20"}})
    {
        INFO(cut.entry);
        juce::MemoryBlock damaged(wav);
        const auto at = find(cut.entry);
        REQUIRE(at > 0);
        auto* b = static_cast<unsigned char*>(damaged.getData());
        b[at + 4] = cut.length; // little-endian length, the rest of it 0 already
        REQUIRE(b[at + 5] == 0);
        juce::String why;
        CHECK(reopen(damaged, why) == nullptr);
        INFO(why);
        CHECK(why.contains(cut.message));
    }
}
