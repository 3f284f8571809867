// The kerf command, run as a user would run it.
#include "ChainFile.h"
#include "Dsp/SpeechLikeSource.h"
#include "Dsp/Splatter.h"
#include "Response/SystemFunction.h"
#include "Smoothing/Transition.h"
#include "Stages/CombStage.h"

#include <catch2/catch.hpp>
#include <juce_audio_formats/juce_audio_formats.h>

#include <cmath>
#include <csignal>
#include <cstring>
#include <fcntl.h>
#include <filesystem>
#include <fstream>
#include <limits>
#include <map>
#include <random>
#include <spawn.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

using namespace kerf;

namespace
{
struct RunResult
{
    int exitCode = -1;
    juce::String output;
};

RunResult runKerf(const juce::StringArray& args)
{
    juce::StringArray cmd;
    cmd.add(KERF_CLI_PATH);
    cmd.addArray(args);
    juce::ChildProcess proc;
    RunResult r;
    if (!proc.start(cmd, juce::ChildProcess::wantStdOut | juce::ChildProcess::wantStdErr))
        return r;
    r.output = proc.readAllProcessOutput();
    proc.waitForProcessToFinish(60000);
    r.exitCode = static_cast<int>(proc.getExitCode());
    return r;
}

struct TempDir
{
    juce::File dir = juce::File::getSpecialLocation(juce::File::tempDirectory)
                         .getNonexistentChildFile("kerf-cli-test", "", false);
    TempDir() { dir.createDirectory(); }
    ~TempDir() { dir.deleteRecursively(); }
    juce::File operator[](const char* name) const { return dir.getChildFile(name); }
};

void writeWav(const juce::File& f, const juce::AudioBuffer<float>& b, double rate, int bits)
{
    f.deleteFile();
    juce::WavAudioFormat wav;
    std::unique_ptr<juce::AudioFormatWriter> w(
        wav.createWriterFor(new juce::FileOutputStream(f), rate,
                            static_cast<unsigned>(b.getNumChannels()), bits, {}, 0));
    REQUIRE(w != nullptr);
    REQUIRE(w->writeFromAudioSampleBuffer(b, 0, b.getNumSamples()));
}

std::unique_ptr<juce::AudioFormatReader> openWav(const juce::File& f)
{
    juce::WavAudioFormat wav;
    return std::unique_ptr<juce::AudioFormatReader>(
        wav.createReaderFor(new juce::FileInputStream(f), true));
}

const char* kChain = R"({"format": "kerf-chain", "version": 1, "stages": [
  {"type": "peaking", "freq_hz": 1000, "gain_db": 6, "q": 1.0, "enabled": true},
  {"type": "peaking", "freq_hz": 120, "gain_db": -8, "q": 3.0, "enabled": true}]})";
} // namespace

TEST_CASE("cli: render of an impulse equals the Dsp library processing the same chain", "[cli]")
{
    // Project invariant: kerf render runs exactly the Dsp code (checked sample for sample).
    TempDir t;
    t["chain.json"].replaceWithText(kChain);
    const double rate = 44100.0;
    const int n = 20000; // several processing blocks, not a multiple of the block size
    juce::AudioBuffer<float> in(2, n);
    in.clear();
    in.setSample(0, 0, 1.0f);
    in.setSample(1, 3, -0.25f);
    writeWav(t["in.wav"], in, rate, 32);

    const auto r = runKerf({"render", t["in.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                            "--chain", t["chain.json"].getFullPathName()});
    INFO(r.output);
    REQUIRE(r.exitCode == 0);
    auto reader = openWav(t["out.wav"]);
    REQUIRE(reader != nullptr);
    CHECK(reader->sampleRate == rate);
    CHECK(reader->numChannels == 2);
    CHECK(reader->lengthInSamples == n);
    CHECK(reader->usesFloatingPointData);
    juce::AudioBuffer<float> out(2, n);
    REQUIRE(reader->read(&out, 0, n, 0, true, true));

    // The Dsp library directly, float I/O as in the plugin.
    const auto chain = parseChainJson(kChain);
    REQUIRE(chain.ok);
    dsp::ChainProcessor direct;
    direct.prepare(rate, 512, 2);
    direct.setChain(chain.chain);
    juce::AudioBuffer<float> expected(in);
    direct.process(expected.getArrayOfWritePointers(), 2, n);
    int mismatches = 0;
    for (int ch = 0; ch < 2; ++ch)
        for (int i = 0; i < n; ++i)
            if (out.getSample(ch, i) != expected.getSample(ch, i))
                ++mismatches;
    CHECK(mismatches == 0);
    CHECK(out.getSample(0, 0) > 1.0f); // +6 dB section: the float file keeps the over
}

TEST_CASE("cli: PCM output keeps rate, channels and length; dither is TPDF", "[cli]")
{
    // Source (from memory): R. A. Wannamaker, S. P. Lipshitz, J. Vanderkooy, "A Theory of
    // Nonsubtractive Dither", IEEE Trans. Signal Processing 48(2), 2000: with TPDF dither
    // of 2 LSB peak to peak the total error has power LSB^2/4 (1/12 rounding + 1/6
    // dither), independent of the signal; mean zero.
    TempDir t;
    t["empty.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": []})");
    const int n = 96000;
    const double lsb = 1.0 / 32768.0;
    juce::AudioBuffer<float> in(2, n);
    for (int i = 0; i < n; ++i)
    {
        in.setSample(0, i, 0.0f);                                                 // silence
        in.setSample(1, i, static_cast<float>(100.3 * lsb * std::sin(0.01 * i))); // off-grid
    }
    writeWav(t["in.wav"], in, 96000.0, 32);
    const auto r = runKerf({"render", t["in.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                            "--chain", t["empty.json"].getFullPathName(), "--bits", "16"});
    INFO(r.output);
    REQUIRE(r.exitCode == 0);
    auto reader = openWav(t["out.wav"]);
    REQUIRE(reader != nullptr);
    CHECK(reader->bitsPerSample == 16);
    CHECK(reader->sampleRate == 96000.0);
    CHECK(reader->numChannels == 2);
    CHECK(reader->lengthInSamples == n);
    juce::AudioBuffer<float> out(2, n);
    reader->read(&out, 0, n, 0, true, true);
    for (int ch = 0; ch < 2; ++ch)
    {
        double power = 0.0, mean = 0.0;
        for (int i = 0; i < n; ++i)
        {
            const double e = (out.getSample(ch, i) - in.getSample(ch, i)) / lsb;
            power += e * e;
            mean += e;
        }
        power /= n;
        mean /= n;
        INFO("channel " << ch << " error power " << power << " LSB^2, mean " << mean);
        CHECK(power == Approx(0.25).margin(0.01));
        CHECK(std::abs(mean) < 0.01);
    }
}

TEST_CASE("cli: clipping in PCM output is counted and reported", "[cli]")
{
    // Common practice: a PCM render that clips says so.
    TempDir t;
    t["chain.json"].replaceWithText(kChain);
    juce::AudioBuffer<float> in(1, 4800);
    for (int i = 0; i < 4800; ++i)
        in.setSample(0, i, 0.99f * std::sin(2.0f * 3.14159265f * 1000.0f * i / 48000.0f));
    writeWav(t["in.wav"], in, 48000.0, 32);
    const auto r = runKerf({"render", t["in.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                            "--chain", t["chain.json"].getFullPathName(), "--bits", "24"});
    CHECK(r.exitCode == 0);
    CHECK(r.output.contains("clipped"));
}

TEST_CASE("cli: bad input gives a clear message, a non-zero exit and leaves input untouched",
          "[cli]")
{
    // Common practice for batch tools: fail loudly, never damage the source.
    TempDir t;
    t["chain.json"].replaceWithText(kChain);
    juce::AudioBuffer<float> in(2, 48000);
    for (int i = 0; i < 48000; ++i)
        in.setSample(0, i, 0.1f * std::sin(0.05f * static_cast<float>(i))),
            in.setSample(1, i, 0.0f);
    writeWav(t["in.wav"], in, 48000.0, 24);
    juce::MemoryBlock original;
    t["in.wav"].loadFileAsData(original);

    SECTION("truncated WAV")
    {
        juce::MemoryBlock cut(original.getData(), original.getSize() / 2);
        t["cut.wav"].replaceWithData(cut.getData(), cut.getSize());
        const auto r =
            runKerf({"render", t["cut.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                     "--chain", t["chain.json"].getFullPathName()});
        CHECK(r.exitCode != 0);
        CHECK(r.output.contains("truncated"));
        CHECK_FALSE(t["out.wav"].exists());
    }
    SECTION("a directory as input")
    {
        const auto r = runKerf({"render", t.dir.getFullPathName(), t["out.wav"].getFullPathName(),
                                "--chain", t["chain.json"].getFullPathName()});
        CHECK(r.exitCode != 0);
        CHECK(r.output.contains("directory"));
    }
    SECTION("an unreadable chain file")
    {
        t["bad.json"].replaceWithText("{\"format\": \"kerf-chain\", \"version\": 1, \"stages\": [");
        auto r = runKerf({"render", t["in.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                          "--chain", t["bad.json"].getFullPathName()});
        CHECK(r.exitCode != 0);
        CHECK(r.output.contains("bad.json"));
        r = runKerf({"render", t["in.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                     "--chain", t["missing.json"].getFullPathName()});
        CHECK(r.exitCode != 0);
        CHECK(r.output.contains("does not exist"));
        r = runKerf({"render", t["in.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                     "--chain", t.dir.getFullPathName()});
        CHECK(r.exitCode != 0);
        CHECK(r.output.contains("directory"));
        CHECK_FALSE(t["out.wav"].exists());
    }
    SECTION("output path equal to the input, directly or through a link")
    {
        auto r = runKerf({"render", t["in.wav"].getFullPathName(), t["in.wav"].getFullPathName(),
                          "--chain", t["chain.json"].getFullPathName()});
        CHECK(r.exitCode != 0);
        CHECK(r.output.contains("never writes over its input"));
        REQUIRE(t["in.wav"].createSymbolicLink(t["link.wav"], true));
        r = runKerf({"render", t["in.wav"].getFullPathName(), t["link.wav"].getFullPathName(),
                     "--chain", t["chain.json"].getFullPathName()});
        CHECK(r.exitCode != 0);
    }
    SECTION("not audio at all")
    {
        t["noise.wav"].replaceWithText("RIFF but not really a wave file");
        const auto r =
            runKerf({"render", t["noise.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                     "--chain", t["chain.json"].getFullPathName()});
        CHECK(r.exitCode != 0);
        CHECK(r.output.contains("not a readable"));
    }
    // Whatever happened, the input is byte for byte what it was, and no temp file is left.
    juce::MemoryBlock after;
    t["in.wav"].loadFileAsData(after);
    CHECK(after == original);
    CHECK(t.dir.findChildFiles(juce::File::findFiles, false, "*.tmp").isEmpty());
}

TEST_CASE("cli: response prints the documented CSV and JSON", "[cli]")
{
    // Source: output formats documented in README.md; values from the Dsp system function.
    TempDir t;
    t["chain.json"].replaceWithText(kChain);
    auto r = runKerf({"response", "--chain", t["chain.json"].getFullPathName()});
    REQUIRE(r.exitCode == 0);
    auto lines = juce::StringArray::fromLines(r.output.trim());
    CHECK(lines[0] == "freq_hz,magnitude_db,phase_deg,group_delay_samples");
    CHECK(lines.size() == 513);
    CHECK(lines[1].upToFirstOccurrenceOf(",", false, false).getDoubleValue() == Approx(10.0));
    CHECK(lines[512].upToFirstOccurrenceOf(",", false, false).getDoubleValue() < 24000.0);
    CHECK(lines[512].upToFirstOccurrenceOf(",", false, false).getDoubleValue() > 23990.0);

    r = runKerf({"response", "--chain", t["chain.json"].getFullPathName(), "--rate", "44100",
                 "--freqs", "1000,120", "--format", "json"});
    REQUIRE(r.exitCode == 0);
    const auto json = juce::JSON::parse(r.output);
    CHECK(static_cast<double>(json["sample_rate"]) == 44100.0);
    const auto* points = json["points"].getArray();
    REQUIRE(points != nullptr);
    REQUIRE(points->size() == 2);
    const auto chain = parseChainJson(kChain);
    const auto expected = dsp::chainResponse(chain.chain, 44100.0, {1000.0, 120.0});
    CHECK(static_cast<double>((*points)[0]["magnitude_db"]) ==
          Approx(expected[0].magnitudeDb).margin(1e-9));
    CHECK(static_cast<double>((*points)[1]["group_delay_samples"]) ==
          Approx(expected[1].groupDelaySamples).margin(1e-9));

    CHECK(runKerf({"response", "--chain", t["chain.json"].getFullPathName(), "--freqs", "30000"})
              .exitCode == 2);
    CHECK(runKerf({"response"}).exitCode == 2);
    CHECK(runKerf({"--help"}).exitCode == 0);
    CHECK(runKerf({"render", "--help"}).output.contains("Usage: kerf render"));
    CHECK(runKerf({"response", "--help"}).output.contains("Usage: kerf response"));
    CHECK(runKerf({"bogus"}).exitCode == 2);
}

TEST_CASE("cli: response --poles, --channel and --plot", "[cli]")
{
    // Source: output formats documented in README.md; PNG signature from the PNG
    // specification (ISO/IEC 15948: 89 50 4E 47 0D 0A 1A 0A).
    TempDir t;
    t["chain.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "high_pass", "freq_hz": 80, "order": 3},
      {"type": "peaking", "freq_hz": 1000, "gain_db": 6, "q": 1, "channels": "left"}]})");
    auto r = runKerf({"response", "--chain", t["chain.json"].getFullPathName(), "--poles"});
    REQUIRE(r.exitCode == 0);
    const auto json = juce::JSON::parse(r.output);
    REQUIRE(json["stages"].isArray());
    CHECK(json["stages"].size() == 2);
    CHECK(json["stages"][0]["poles"].size() == 3); // third order: three poles
    CHECK(json["chain"]["poles"].size() == 5);     // left path: both stages
    r = runKerf({"response", "--chain", t["chain.json"].getFullPathName(), "--poles", "--channel",
                 "right"});
    CHECK(juce::JSON::parse(r.output)["chain"]["poles"].size() == 3); // right path: high-pass only

    r = runKerf({"response", "--chain", t["chain.json"].getFullPathName(), "--freqs", "1000",
                 "--channel", "right", "--format", "json"});
    const double right1k = juce::JSON::parse(r.output)["points"][0]["magnitude_db"];
    r = runKerf({"response", "--chain", t["chain.json"].getFullPathName(), "--freqs", "1000",
                 "--channel", "left", "--format", "json"});
    const double left1k = juce::JSON::parse(r.output)["points"][0]["magnitude_db"];
    CHECK(left1k - right1k == Approx(6.0).margin(0.01)); // peaking gain at f0 on the left only

    r = runKerf({"response", "--chain", t["chain.json"].getFullPathName(), "--plot",
                 t["plot.png"].getFullPathName()});
    REQUIRE(r.exitCode == 0);
    juce::MemoryBlock png;
    REQUIRE(t["plot.png"].loadFileAsData(png));
    REQUIRE(png.getSize() > 10000);
    const unsigned char signature[] = {0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a};
    CHECK(std::memcmp(png.getData(), signature, 8) == 0);
    CHECK(runKerf({"response", "--chain", t["chain.json"].getFullPathName(), "--channel", "centre"})
              .exitCode == 2);
}

TEST_CASE("cli: echo cancellation in render, unstable models refused, non-causal offline",
          "[cli][echo]")
{
    // Source: the echo model y = x + a x[n - D] (issue definition); with |a| >= 1 the causal
    // inverse is unstable (the root of 1 + a z^-D has radius |a|^(1/D) >= 1) and the
    // time-reversed inverse is stable. Synthetic noise, invented echo values.
    TempDir t;
    const double rate = 48000.0;
    const int n = 48000, d = 300;
    std::mt19937 rng(99);
    std::uniform_real_distribution<float> u(-0.2f, 0.2f);
    std::vector<float> clean(static_cast<std::size_t>(n));
    for (auto& v : clean)
        v = u(rng);
    auto echoed = [&](double a)
    {
        juce::AudioBuffer<float> b(1, n);
        for (int i = 0; i < n; ++i)
            b.setSample(
                0, i,
                static_cast<float>(clean[static_cast<std::size_t>(i)] +
                                   (i >= d ? a * clean[static_cast<std::size_t>(i - d)] : 0.0)));
        return b;
    };
    auto residualDb = [&](const juce::File& f, int from, int to)
    {
        auto reader = openWav(f);
        juce::AudioBuffer<float> out(1, n);
        reader->read(&out, 0, n, 0, true, true);
        double e = 0.0, s = 0.0;
        for (int i = from; i < to; ++i)
        {
            e += juce::square(out.getSample(0, i) - clean[static_cast<std::size_t>(i)]);
            s += juce::square(clean[static_cast<std::size_t>(i)]);
        }
        return 10.0 * std::log10(e / s);
    };

    // A gentle echo, exact causal inverse.
    writeWav(t["soft.wav"], echoed(0.5), rate, 32);
    t["exact.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "echo_cancel", "reflections": [{"delay_ms": 6.25, "gain": 0.5}]}]})");
    auto r =
        runKerf({"render", t["soft.wav"].getFullPathName(), t["soft-out.wav"].getFullPathName(),
                 "--chain", t["exact.json"].getFullPathName()});
    INFO(r.output);
    REQUIRE(r.exitCode == 0);
    CHECK(residualDb(t["soft-out.wav"], 0, n) < -100.0);

    // A reflection stronger than the direct sound: the causal inverse is refused...
    writeWav(t["strong.wav"], echoed(1.5), rate, 32);
    t["strong.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "echo_cancel", "reflections": [{"delay_ms": 6.25, "gain": 1.5}]}]})");
    r = runKerf({"render", t["strong.wav"].getFullPathName(), t["bad-out.wav"].getFullPathName(),
                 "--chain", t["strong.json"].getFullPathName()});
    CHECK(r.exitCode != 0);
    CHECK(r.output.contains("stage 0"));
    CHECK_FALSE(t["bad-out.wav"].exists());

    // ... and the offline, backwards-in-time inverse recovers the clean signal.
    t["noncausal.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "echo_cancel", "reflections": [{"delay_ms": 6.25, "gain": 1.5}], "non_causal": true}]})");
    r = runKerf({"render", t["strong.wav"].getFullPathName(), t["nc-out.wav"].getFullPathName(),
                 "--chain", t["noncausal.json"].getFullPathName()});
    INFO(r.output);
    REQUIRE(r.exitCode == 0);
    // Away from the file's end (where the backwards recursion starts without the future).
    const double nc = residualDb(t["nc-out.wav"], 0, n - 4800);
    INFO("non-causal residual " << nc << " dB");
    CHECK(nc < -60.0);
}

TEST_CASE("cli: echo-estimate finds a reflection, writes a chain that cancels it, reports none "
          "for a dry recording",
          "[cli][echo]")
{
    // Issue bars for one reflection (delay within 1 sample, gain within 0.05); ERLE as ITU-T
    // G.168 defines it (echo power over residual echo power, clean signal known) >= 20 dB.
    // Deterministic speech-like source (Tests/Dsp/SpeechLikeSource.h), invented echo values.
    TempDir t;
    const double rate = 48000.0, delaySamples = 609.6, gain = 0.5;
    const auto clean = kerf::test::speechLike(rate, 10.0, 2026);
    const auto late = kerf::test::delayedBySinc(clean, delaySamples, 32);
    const int n = static_cast<int>(clean.size());
    juce::AudioBuffer<float> wet(1, n), dry(1, n);
    for (int i = 0; i < n; ++i)
    {
        dry.setSample(0, i, static_cast<float>(clean[static_cast<std::size_t>(i)]));
        wet.setSample(0, i,
                      static_cast<float>(clean[static_cast<std::size_t>(i)] +
                                         gain * late[static_cast<std::size_t>(i)]));
    }
    writeWav(t["wet.wav"], wet, rate, 32);
    writeWav(t["dry.wav"], dry, rate, 32);

    auto r = runKerf({"echo-estimate", t["wet.wav"].getFullPathName(), "--json", "--write-chain",
                      t["found.json"].getFullPathName()});
    INFO(r.output);
    REQUIRE(r.exitCode == 0);
    const auto json = juce::JSON::parse(r.output.upToFirstOccurrenceOf("\n", false, false));
    REQUIRE(json["reflections"].size() >= 1);
    const auto first = json["reflections"][0];
    CHECK(std::abs(static_cast<double>(first["delay_samples"]) - delaySamples) <= 1.0);
    CHECK(std::abs(static_cast<double>(first["gain"]) - gain) <= 0.05);

    r = runKerf({"render", t["wet.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                 "--chain", t["found.json"].getFullPathName()});
    REQUIRE(r.exitCode == 0);
    auto reader = openWav(t["out.wav"]);
    juce::AudioBuffer<float> out(1, n);
    reader->read(&out, 0, n, 0, true, true);
    double echoPower = 0.0, residualPower = 0.0;
    for (int i = 0; i < n; ++i)
    {
        echoPower += juce::square(gain * late[static_cast<std::size_t>(i)]);
        residualPower += juce::square(out.getSample(0, i) - clean[static_cast<std::size_t>(i)]);
    }
    const double erle = 10.0 * std::log10(echoPower / residualPower);
    INFO("ERLE " << erle << " dB");
    CHECK(erle >= 20.0);

    r = runKerf({"echo-estimate", t["dry.wav"].getFullPathName(), "--json"});
    REQUIRE(r.exitCode == 0);
    CHECK(juce::JSON::parse(r.output)["reflections"].size() == 0);
    CHECK(runKerf({"echo-estimate", t["dry.wav"].getFullPathName(), "--max-reflections", "9"})
              .exitCode == 2);
}

TEST_CASE("cli: a --switch timeline changes chains without splatter", "[cli][smoothing]")
{
    // Issue bar (as for the processor, Tests/Dsp/SmoothingTests.cpp): a 100 Hz sine at
    // -6 dBFS rendered with chain A, then B from 2.5 s and C from 4.0 s: <= -80 dBFS above
    // 1 kHz in every 10 ms window. Comparator: the three plain renders spliced at the same
    // times (instant switching), which must measure at least 30 dB worse. Before the first
    // switch the timeline render equals the plain render of A sample for sample.
    TempDir tmp;
    const double rate = 48000.0;
    const auto tone = kerf::test::testTone(rate, 6.0);
    juce::AudioBuffer<float> in(1, static_cast<int>(tone.size()));
    for (int i = 0; i < in.getNumSamples(); ++i)
        in.setSample(0, i, static_cast<float>(tone[static_cast<std::size_t>(i)]));
    writeWav(tmp["in.wav"], in, rate, 32);
    // Invented settings: a boost with a high-pass, then a notch near the tone with a
    // feedback comb, then a low shelf cut with an echo inverse.
    tmp["a.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "peaking", "freq_hz": 110, "gain_db": 12, "q": 4},
      {"type": "high_pass", "freq_hz": 40, "order": 4}]})");
    tmp["b.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "notch", "freq_hz": 160, "q": 2},
      {"type": "low_pass", "freq_hz": 3000, "order": 2, "q": 6},
      {"type": "comb", "mode": "feedback", "pitch_hz": 220, "gain": 0.9, "mix": 0.5}]})");
    tmp["c.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "low_shelf", "freq_hz": 300, "gain_db": -15, "slope": 1},
      {"type": "echo_cancel", "reflections": [{"delay_ms": 12.7, "gain": 0.5}]}]})");

    const auto timeline = runKerf(
        {"render", tmp["in.wav"].getFullPathName(), tmp["t.wav"].getFullPathName(), "--chain",
         tmp["a.json"].getFullPathName(), "--switch", "2.5:" + tmp["b.json"].getFullPathName(),
         "--switch", "4.0:" + tmp["c.json"].getFullPathName()});
    INFO(timeline.output);
    REQUIRE(timeline.exitCode == 0);
    std::vector<std::vector<double>> plain;
    for (const char* c : {"a", "b", "c"})
    {
        const auto out = tmp.dir.getChildFile(juce::String(c) + ".wav");
        const auto r =
            runKerf({"render", tmp["in.wav"].getFullPathName(), out.getFullPathName(), "--chain",
                     tmp.dir.getChildFile(juce::String(c) + ".json").getFullPathName()});
        REQUIRE(r.exitCode == 0);
        auto reader = openWav(out);
        juce::AudioBuffer<float> b(1, static_cast<int>(reader->lengthInSamples));
        reader->read(&b, 0, b.getNumSamples(), 0, true, true);
        plain.emplace_back(b.getReadPointer(0), b.getReadPointer(0) + b.getNumSamples());
    }
    auto reader = openWav(tmp["t.wav"]);
    REQUIRE(reader->lengthInSamples == in.getNumSamples());
    juce::AudioBuffer<float> t(1, in.getNumSamples());
    reader->read(&t, 0, t.getNumSamples(), 0, true, true);
    std::vector<double> got(t.getReadPointer(0), t.getReadPointer(0) + t.getNumSamples());
    const int s1 = static_cast<int>(2.5 * rate), s2 = static_cast<int>(4.0 * rate);
    std::vector<double> spliced(got.size());
    for (int i = 0; i < static_cast<int>(got.size()); ++i)
        spliced[static_cast<std::size_t>(i)] = plain[i < s1   ? 0
                                                     : i < s2 ? 1
                                                              : 2][static_cast<std::size_t>(i)];
    bool sameBefore = true;
    for (int i = 0; i < s1; ++i)
        sameBefore =
            sameBefore && got[static_cast<std::size_t>(i)] == plain[0][static_cast<std::size_t>(i)];
    CHECK(sameBefore);
    const double kerf = kerf::test::worstSplatterDbfs(got, rate, 0.25);
    const double instant = kerf::test::worstSplatterDbfs(spliced, rate, 0.25);
    WARN("splatter, --switch timeline: Kerf " << kerf << " dBFS, spliced renders " << instant
                                              << " dBFS");
    CHECK(kerf <= -80.0);
    CHECK(instant >= kerf + 30.0);
    // The chains did change: around 3 s (chain B) the output differs from chain A's.
    CHECK(std::abs(got[static_cast<std::size_t>(3 * 48000 + 17)] - plain[0][3 * 48000 + 17]) >
          1e-3);

    // Usage errors: a malformed switch and times out of order.
    CHECK(runKerf({"render", tmp["in.wav"].getFullPathName(), tmp["x.wav"].getFullPathName(),
                   "--chain", tmp["a.json"].getFullPathName(), "--switch", "later"})
              .exitCode == 2);
    CHECK(runKerf({"render", tmp["in.wav"].getFullPathName(), tmp["x.wav"].getFullPathName(),
                   "--chain", tmp["a.json"].getFullPathName(), "--switch",
                   "3:" + tmp["b.json"].getFullPathName(), "--switch",
                   "2:" + tmp["c.json"].getFullPathName()})
              .exitCode == 2);
    CHECK_FALSE(tmp["x.wav"].exists());
}

TEST_CASE("cli: a --switch timeline sweeps a comb that asks for it, and crossfades one that "
          "does not",
          "[cli][comb]")
{
    // README ("delay_change"): with "sweep" in both chains, the comb's delay moves from 2 to
    // 9 ms over the glide time from the switch on, exactly as one comb stage sweeping there
    // (the processor's own test, Tests/Dsp/CombTests.cpp, checks that sweep against the
    // analytic delayed sine); with "crossfade" the same switch crossfades and differs.
    TempDir tmp;
    const double rate = 48000.0;
    const int n = 96000, at = 48000; // the switch at 1.0 s, an update point
    juce::AudioBuffer<float> in(1, n);
    for (int i = 0; i < n; ++i)
        in.setSample(0, i, static_cast<float>(0.4 * std::sin(2.0 * M_PI * 500.0 * i / rate)));
    writeWav(tmp["in.wav"], in, rate, 32);
    for (const char* change : {"sweep", "crossfade"})
    {
        auto chain = [&](const char* ms)
        {
            return juce::String(R"({"format": "kerf-chain", "version": 1, "stages": [
              {"type": "comb", "delay_ms": )") +
                   ms + R"(, "gain": 0.5, "delay_change": ")" + change + "\"}]}";
        };
        tmp["a.json"].replaceWithText(chain("2"));
        tmp["b.json"].replaceWithText(chain("9"));
        const auto r =
            runKerf({"render", tmp["in.wav"].getFullPathName(), tmp["t.wav"].getFullPathName(),
                     "--chain", tmp["a.json"].getFullPathName(), "--switch",
                     "1.0:" + tmp["b.json"].getFullPathName(), "--glide", "50"});
        INFO(change << ": " << r.output);
        REQUIRE(r.exitCode == 0);
        auto reader = openWav(tmp["t.wav"]);
        juce::AudioBuffer<float> got(1, n);
        reader->read(&got, 0, n, 0, true, true);

        kerf::dsp::CombSettings from, to;
        from.delayMs = 2.0;
        to.delayMs = 9.0;
        from.gain = to.gain = 0.5;
        from.sweepDelay = to.sweepDelay = true;
        kerf::dsp::CombStage comb;
        comb.prepare(rate, 512, 1);
        comb.setSettings(from);
        std::vector<double> x(static_cast<std::size_t>(n));
        for (int i = 0; i < n; ++i)
            x[static_cast<std::size_t>(i)] = in.getSample(0, i);
        double* head[1] = {x.data()};
        comb.process(head, 1, at);
        comb.sweepTo(to, kerf::dsp::transitionSamples(50.0, rate));
        double* tail[1] = {x.data() + at};
        comb.process(tail, 1, n - at);
        double worst = 0.0;
        for (int i = 0; i < n; ++i)
            worst = std::max(worst, std::abs(got.getSample(0, i) - x[static_cast<std::size_t>(i)]));
        if (juce::String(change) == "sweep")
            CHECK(worst < 1e-6); // float file: rounding only
        else
            CHECK(worst > 1e-2);
    }
}

TEST_CASE("cli: render processes NaN and infinite input samples as silence and says so",
          "[cli][robustness]")
{
    // Common practice: a damaged float file (NaN, infinities) must not produce a damaged
    // output; the bad samples count as silence, with and without a non-causal stage (which
    // runs over the whole file first), and the user is told how many there were.
    TempDir tmp;
    const double rate = 48000.0;
    juce::AudioBuffer<float> in(2, 24000);
    for (int i = 0; i < in.getNumSamples(); ++i)
        for (int ch = 0; ch < 2; ++ch)
            in.setSample(ch, i, 0.25f * std::sin(0.01f * static_cast<float>(i * (ch + 1))));
    in.setSample(0, 1000, std::numeric_limits<float>::quiet_NaN());
    in.setSample(1, 2000, std::numeric_limits<float>::infinity());
    in.setSample(0, 3000, -std::numeric_limits<float>::infinity());
    writeWav(tmp["bad.wav"], in, rate, 32);
    tmp["live.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "peaking", "freq_hz": 500, "gain_db": 6, "q": 1},
      {"type": "comb", "mode": "feedback", "pitch_hz": 220, "gain": 0.9, "mix": 0.5},
      {"type": "echo_cancel", "reflections": [{"delay_ms": 6, "gain": 0.5}]}]})");
    tmp["offline.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "echo_cancel", "non_causal": true, "reflections": [{"delay_ms": 6, "gain": 1.2}]}]})");
    for (const char* chainName : {"live.json", "offline.json"})
    {
        INFO(chainName);
        const auto r =
            runKerf({"render", tmp["bad.wav"].getFullPathName(), tmp["out.wav"].getFullPathName(),
                     "--chain", tmp[chainName].getFullPathName()});
        INFO(r.output);
        REQUIRE(r.exitCode == 0);
        CHECK(r.output.contains("3 input samples were not numbers"));
        auto reader = openWav(tmp["out.wav"]);
        juce::AudioBuffer<float> out(2, static_cast<int>(reader->lengthInSamples));
        reader->read(&out, 0, out.getNumSamples(), 0, true, true);
        bool finite = true;
        for (int ch = 0; ch < 2; ++ch)
            for (int i = 0; i < out.getNumSamples(); ++i)
                finite = finite && std::isfinite(out.getSample(ch, i));
        CHECK(finite);
        // Not silenced as a whole: the signal is still there after the bad samples.
        CHECK(out.getMagnitude(0, 20000, 4000) > 0.05f);
    }
}

// ---- Data safety (issue 8, item 3) ---------------------------------------------------------

namespace
{
/// Runs kerf with `dir` as its working folder (relative paths resolve there).
RunResult runKerfIn(const juce::File& dir, const juce::StringArray& args)
{
    auto quote = [](const juce::String& s) { return "'" + s.replace("'", "'\\''") + "'"; };
    juce::String line = "cd " + quote(dir.getFullPathName()) + " && exec " + quote(KERF_CLI_PATH);
    for (const auto& a : args)
        line << " " << quote(a);
    juce::ChildProcess proc;
    RunResult r;
    if (!proc.start(juce::StringArray{"/bin/sh", "-c", line},
                    juce::ChildProcess::wantStdOut | juce::ChildProcess::wantStdErr))
        return r;
    r.output = proc.readAllProcessOutput();
    proc.waitForProcessToFinish(60000);
    r.exitCode = static_cast<int>(proc.getExitCode());
    return r;
}

/// Every entry of a folder (hidden ones included) with its bytes (regular files), its
/// target (symbolic links) and its modification time.
std::map<std::string, std::string> snapshot(const juce::File& dir)
{
    namespace fs = std::filesystem;
    std::map<std::string, std::string> out;
    for (const auto& e : fs::directory_iterator(dir.getFullPathName().toStdString()))
    {
        struct stat st
        {
        };
        if (::lstat(e.path().c_str(), &st) != 0)
            continue; // removed meanwhile (a temporary while kerf runs)
        std::string what =
            std::to_string(st.st_mtim.tv_sec) + "." + std::to_string(st.st_mtim.tv_nsec) + ":";
        if (S_ISLNK(st.st_mode))
            what += "link " + fs::read_symlink(e.path()).string();
        else if (S_ISREG(st.st_mode))
        {
            std::ifstream f(e.path(), std::ios::binary);
            what += std::string(std::istreambuf_iterator<char>(f), {});
        }
        else
            what += "folder";
        out[e.path().filename().string()] = what;
    }
    return out;
}

/// Names in `dir` that look like kerf's temporary files.
std::vector<std::string> temporaries(const juce::File& dir)
{
    std::vector<std::string> out;
    for (const auto& [name, what] : snapshot(dir))
        if (name.find(".kerf-") != std::string::npos || name.find(".tmp") != std::string::npos)
            out.push_back(name);
    return out;
}

/// A 32-bit integer PCM WAV written byte by byte (JUCE writes 32 bits as float). Source:
/// the RIFF WAVE layout (Microsoft/IBM, "Multimedia Programming Interface and Data
/// Specifications 1.0", 1991; from memory): "RIFF" size "WAVE", "fmt " chunk of 16 bytes
/// (format 1, channels, rate, bytes per second, block align, bits), "data" chunk,
/// interleaved little-endian samples.
void writeWavInt32(const juce::File& f, const std::vector<std::vector<std::int32_t>>& channels,
                   int rate)
{
    const auto numChannels = static_cast<std::uint32_t>(channels.size());
    const auto frames = static_cast<std::uint32_t>(channels[0].size());
    juce::MemoryOutputStream s;
    const std::uint32_t dataBytes = frames * numChannels * 4;
    s.write("RIFF", 4);
    s.writeInt(static_cast<int>(36 + dataBytes));
    s.write("WAVE", 4);
    s.write("fmt ", 4);
    s.writeInt(16);
    s.writeShort(1);
    s.writeShort(static_cast<short>(numChannels));
    s.writeInt(rate);
    s.writeInt(rate * static_cast<int>(numChannels) * 4);
    s.writeShort(static_cast<short>(numChannels * 4));
    s.writeShort(32);
    s.write("data", 4);
    s.writeInt(static_cast<int>(dataBytes));
    for (std::uint32_t i = 0; i < frames; ++i)
        for (std::uint32_t ch = 0; ch < numChannels; ++ch)
            s.writeInt(channels[ch][i]);
    REQUIRE(f.replaceWithData(s.getData(), s.getDataSize()));
}

/// Writes `b` with one of JUCE's writers ("wav", "flac", "aiff").
void writeAudio(const juce::File& f, const juce::AudioBuffer<float>& b, double rate,
                const juce::String& format, int bits)
{
    f.deleteFile();
    std::unique_ptr<juce::AudioFormat> fmt;
    if (format == "flac")
        fmt = std::make_unique<juce::FlacAudioFormat>();
    else if (format == "aiff")
        fmt = std::make_unique<juce::AiffAudioFormat>();
    else
        fmt = std::make_unique<juce::WavAudioFormat>();
    auto* stream = new juce::FileOutputStream(f);
    std::unique_ptr<juce::AudioFormatWriter> w(
        fmt->createWriterFor(stream, rate, static_cast<unsigned>(b.getNumChannels()), bits, {}, 0));
    if (w == nullptr)
        delete stream;
    REQUIRE(w != nullptr);
    REQUIRE(w->writeFromAudioSampleBuffer(b, 0, b.getNumSamples()));
}

/// A deterministic test signal within +-0.9, different on every channel.
juce::AudioBuffer<float> testSignal(int channels, int n, std::uint32_t seed)
{
    std::mt19937 rng(seed);
    std::uniform_real_distribution<float> u(-0.9f, 0.9f);
    juce::AudioBuffer<float> b(channels, n);
    for (int ch = 0; ch < channels; ++ch)
        for (int i = 0; i < n; ++i)
            b.setSample(ch, i, u(rng));
    return b;
}

const char* kEmptyChain = R"({"format": "kerf-chain", "version": 1, "stages": []})";
} // namespace

TEST_CASE("cli: no command writes over a file it reads, whatever the spelling or link",
          "[cli][safety]")
{
    // Common practice for batch tools (data safety): refuse with a message, exit non-zero,
    // and leave every file as it was (bytes and modification time).
    TempDir t;
    t["chain.json"].replaceWithText(kChain);
    t["next.json"].replaceWithText(kChain);
    writeWav(t["in.wav"], testSignal(2, 4800, 1), 48000.0, 24);
    REQUIRE(t["sub"].createDirectory());
    REQUIRE(t["in.wav"].createSymbolicLink(t["soft.wav"], true));
    REQUIRE(::link(t["in.wav"].getFullPathName().toRawUTF8(),
                   t["hard.wav"].getFullPathName().toRawUTF8()) == 0);
    REQUIRE(t.dir.createSymbolicLink(t["alias"], true));
    REQUIRE(t["next.json"].createSymbolicLink(t["next-link.wav"], true));
    const auto before = snapshot(t.dir);
    const juce::String parentSpelling = "../" + t.dir.getFileName() + "/in.wav";

    struct Case
    {
        const char* what;
        juce::String out, role;
    };
    const std::vector<Case> cases{
        {"the same path", t["in.wav"].getFullPathName(), "input file"},
        {"./ spelling", "./in.wav", "input file"},
        {"../folder spelling", parentSpelling, "input file"},
        {"sub/.. spelling", "sub/../in.wav", "input file"},
        {"a symbolic link", "soft.wav", "input file"},
        {"a hard link", "hard.wav", "input file"},
        {"through a linked folder", "alias/in.wav", "input file"},
        {"the --chain file", "chain.json", "chain file"},
        {"a link to the --switch file", "next-link.wav", "chain file"},
    };
    for (const auto& c : cases)
    {
        INFO(c.what);
        const auto r = runKerfIn(t.dir, {"render", "in.wav", c.out, "--chain", "chain.json",
                                         "--switch", "0.05:next.json"});
        INFO(r.output);
        CHECK(r.exitCode == 1);
        CHECK(r.output.contains("is the " + c.role + "; kerf never writes over its input"));
        CHECK(snapshot(t.dir) == before);
    }
    // The other commands that write files.
    auto r = runKerfIn(t.dir, {"echo-estimate", "in.wav", "--write-chain", "./hard.wav"});
    INFO(r.output);
    CHECK(r.exitCode == 1);
    CHECK(r.output.contains("is the input file"));
    r = runKerfIn(t.dir, {"response", "--chain", "chain.json", "--plot", "sub/../chain.json"});
    INFO(r.output);
    CHECK(r.exitCode == 1);
    CHECK(r.output.contains("is the chain file"));
    CHECK(snapshot(t.dir) == before);
}

TEST_CASE("cli: a failed render leaves an existing output as it was and no temporary file",
          "[cli][safety]")
{
    // Common practice (atomic replacement): the output is written to a temporary file and
    // renamed over the target only when complete; any failure removes the temporary.
    // Corrupt or unsupported files: a one-line message naming the file, exit status 1.
    TempDir t;
    t["chain.json"].replaceWithText(kChain);
    t["strong.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "echo_cancel", "reflections": [{"delay_ms": 6.25, "gain": 1.5}]}]})");
    writeWav(t["in.wav"], testSignal(2, 48000, 2), 48000.0, 24);
    juce::MemoryBlock wav;
    REQUIRE(t["in.wav"].loadFileAsData(wav));
    // Half the file: the header promises 48000 samples, the render fails after a few blocks.
    t["cut.wav"].replaceWithData(wav.getData(), wav.getSize() / 2);
    t["header-cut.wav"].replaceWithData(wav.getData(), 20); // inside the "fmt " chunk
    juce::MemoryBlock magic(wav);
    std::memcpy(magic.getData(), "JUNK", 4); // not "RIFF"
    t["magic.wav"].replaceWithData(magic.getData(), magic.getSize());
    // A metadata chunk after the audio that claims about 2 GB (JUCE 7.0.5 allocates what an
    // 'smpl' chunk claims and walks its claimed loops; found by fuzzing).
    juce::MemoryBlock smpl(wav);
    const char chunk[12] = {'s', 'm', 'p', 'l', '\xf0', '\xff', '\xff', '\x7f', 0, 0, 0, 0};
    smpl.append(chunk, sizeof(chunk));
    auto* riffSize = static_cast<unsigned char*>(smpl.getData()) + 4; // the RIFF now ends later
    const auto grown = static_cast<juce::uint32>(smpl.getSize() - 8);
    for (int i = 0; i < 4; ++i)
        riffSize[i] = static_cast<unsigned char>(grown >> (8 * i));
    t["smpl.wav"].replaceWithData(smpl.getData(), smpl.getSize());
    t["zero.wav"].create();                             // zero bytes
    t["text.wav"].replaceWithText("just some notes\n"); // a text file named .wav
    t["out.wav"].replaceWithText("an earlier render, kept until a new one is complete");
    const auto before = snapshot(t.dir);

    struct Case
    {
        const char* what;
        juce::StringArray args;
        const char* reason;
        const char* names;
    };
    const std::vector<Case> cases{
        {"truncated input, found mid-way",
         {"render", "cut.wav", "out.wav", "--chain", "chain.json"},
         "is truncated or damaged",
         "cut.wav"},
        {"unstable echo model",
         {"render", "in.wav", "out.wav", "--chain", "strong.json"},
         "stage 0",
         "strong.json"},
        {"truncated header",
         {"render", "header-cut.wav", "out.wav", "--chain", "chain.json"},
         "not a readable WAV, AIFF or FLAC file",
         "header-cut.wav"},
        {"wrong magic",
         {"render", "magic.wav", "out.wav", "--chain", "chain.json"},
         "not a readable WAV, AIFF or FLAC file",
         "magic.wav"},
        {"metadata chunk longer than the file",
         {"render", "smpl.wav", "out.wav", "--chain", "chain.json"},
         "'smpl' chunk claims 2147483632 bytes",
         "smpl.wav"},
        {"zero-length file",
         {"render", "zero.wav", "out.wav", "--chain", "chain.json"},
         "not a readable WAV, AIFF or FLAC file",
         "zero.wav"},
        {"text file named .wav",
         {"render", "text.wav", "out.wav", "--chain", "chain.json"},
         "not a readable WAV, AIFF or FLAC file",
         "text.wav"},
        {"unknown output extension",
         {"render", "in.wav", "out.mp3", "--chain", "chain.json"},
         "the name must end in .wav",
         "out.mp3"},
        {"output folder missing",
         {"render", "in.wav", "nowhere/out.wav", "--chain", "chain.json"},
         "does not exist",
         "nowhere"},
        {"output folder not writable",
         {"render", "in.wav", "/proc/kerf-out.wav", "--chain", "chain.json"},
         "cannot write in /proc",
         "/proc"},
        {"plot with another extension",
         {"response", "--chain", "chain.json", "--plot", "out.jpg"},
         "the name must end in .png",
         "out.jpg"},
    };
    for (const auto& c : cases)
    {
        INFO(c.what);
        const auto r = runKerfIn(t.dir, c.args);
        INFO(r.output);
        CHECK(r.exitCode == 1);
        CHECK(r.output.contains(c.reason));
        CHECK(r.output.contains(c.names));
        CHECK(r.output.trim().startsWith("kerf: "));
        CHECK(snapshot(t.dir) == before); // out.wav untouched, nothing new, no temporary
    }
    if (::geteuid() != 0)
    {
        // Permission bits do not bind root, so this part runs only for other users.
        REQUIRE(::chmod(t["in.wav"].getFullPathName().toRawUTF8(), 0) == 0);
        const auto r = runKerfIn(t.dir, {"render", "in.wav", "out.wav", "--chain", "chain.json"});
        ::chmod(t["in.wav"].getFullPathName().toRawUTF8(), 0644);
        CHECK(r.exitCode == 1);
        CHECK(r.output.contains("cannot open input"));
        CHECK(temporaries(t.dir).empty());
    }

    // A render that succeeds replaces the earlier output.
    const auto r = runKerfIn(t.dir, {"render", "in.wav", "out.wav", "--chain", "chain.json"});
    INFO(r.output);
    REQUIRE(r.exitCode == 0);
    auto reader = openWav(t["out.wav"]);
    REQUIRE(reader != nullptr);
    CHECK(reader->lengthInSamples == 48000);
    // The other commands replace an earlier file the same way.
    t["found.json"].replaceWithText("an earlier chain");
    auto r2 = runKerfIn(t.dir, {"echo-estimate", "in.wav", "--write-chain", "found.json"});
    INFO(r2.output);
    CHECK(r2.exitCode == 0);
    CHECK(readChainFile(t["found.json"]).ok);
    t["plot.png"].replaceWithText("an earlier plot");
    r2 = runKerfIn(t.dir, {"response", "--chain", "chain.json", "--plot", "plot.png"});
    INFO(r2.output);
    CHECK(r2.exitCode == 0);
    juce::MemoryBlock png;
    REQUIRE(t["plot.png"].loadFileAsData(png));
    CHECK(png.getSize() > 8);
    CHECK(std::memcmp(static_cast<const char*>(png.getData()) + 1, "PNG", 3) == 0); // signature
    CHECK(temporaries(t.dir).empty());
}

TEST_CASE("cli: SIGINT or SIGTERM during a render leaves no output and no temporary file",
          "[cli][safety]")
{
    // Common practice: a program stopped by SIGINT (Ctrl-C) exits with 128 + 2 = 130, by
    // SIGTERM with 128 + 15 = 143, and a half-written file is not left behind; an output
    // that existed before stays as it was.
    TempDir t, logs;
    // A long input and a heavy chain, so the render is still running when the signal comes.
    t["heavy.json"].replaceWithText(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "echo_cancel", "reflections": [{"delay_ms": 3.31, "gain": 0.3},
        {"delay_ms": 7.77, "gain": -0.2}, {"delay_ms": 11.13, "gain": 0.1},
        {"delay_ms": 17.19, "gain": 0.1}]},
      {"type": "echo_cancel", "reflections": [{"delay_ms": 5.51, "gain": 0.2},
        {"delay_ms": 9.93, "gain": 0.1}, {"delay_ms": 13.37, "gain": -0.1},
        {"delay_ms": 19.91, "gain": 0.1}]},
      {"type": "comb", "mode": "feedback", "delay_ms": 2.123, "gain": 0.5, "mix": 0.3},
      {"type": "comb", "mode": "feedback", "delay_ms": 3.321, "gain": 0.5, "mix": 0.3},
      {"type": "comb", "mode": "feedforward", "delay_ms": 4.567, "gain": 0.5, "mix": 0.3},
      {"type": "comb", "mode": "feedforward", "delay_ms": 5.789, "gain": 0.5, "mix": 0.3},
      {"type": "peaking", "freq_hz": 100, "gain_db": 1, "q": 1},
      {"type": "peaking", "freq_hz": 200, "gain_db": -1, "q": 1},
      {"type": "peaking", "freq_hz": 400, "gain_db": 1, "q": 1},
      {"type": "peaking", "freq_hz": 800, "gain_db": -1, "q": 1},
      {"type": "peaking", "freq_hz": 1600, "gain_db": 1, "q": 1},
      {"type": "peaking", "freq_hz": 3200, "gain_db": -1, "q": 1},
      {"type": "peaking", "freq_hz": 6400, "gain_db": 1, "q": 1},
      {"type": "peaking", "freq_hz": 12800, "gain_db": -1, "q": 1}]})");
    constexpr int kSeconds = 480, kRate = 8000; // about 2 s of work on the build machine
    writeWav(t["long.wav"], testSignal(1, kSeconds * kRate, 3), kRate, 16);

    for (const int sig : {SIGINT, SIGTERM})
    {
        INFO("signal " << sig);
        const bool earlier = sig == SIGTERM; // with SIGTERM, an earlier output exists
        t["out.wav"].deleteFile();
        if (earlier)
            t["out.wav"].replaceWithText("an earlier render");
        const auto before = snapshot(t.dir);
        const auto errFile = logs["stderr.txt"];

        posix_spawn_file_actions_t actions;
        posix_spawn_file_actions_init(&actions);
        posix_spawn_file_actions_addopen(&actions, STDERR_FILENO,
                                         errFile.getFullPathName().toRawUTF8(),
                                         O_WRONLY | O_CREAT | O_TRUNC, 0644);
        const std::string kerfPath = KERF_CLI_PATH,
                          in = t["long.wav"].getFullPathName().toStdString(),
                          out = t["out.wav"].getFullPathName().toStdString(),
                          chain = t["heavy.json"].getFullPathName().toStdString();
        std::vector<char*> argv{const_cast<char*>(kerfPath.c_str()),
                                const_cast<char*>("render"),
                                const_cast<char*>(in.c_str()),
                                const_cast<char*>(out.c_str()),
                                const_cast<char*>("--chain"),
                                const_cast<char*>(chain.c_str()),
                                nullptr};
        // Default dispositions in the child, even if this test runs with SIGINT ignored (a
        // background job of a non-interactive shell), which kerf would respect.
        posix_spawnattr_t attributes;
        posix_spawnattr_init(&attributes);
        sigset_t defaults;
        sigemptyset(&defaults);
        sigaddset(&defaults, SIGINT);
        sigaddset(&defaults, SIGTERM);
        posix_spawnattr_setsigdefault(&attributes, &defaults);
        posix_spawnattr_setflags(&attributes, POSIX_SPAWN_SETSIGDEF);
        pid_t pid = 0;
        REQUIRE(posix_spawn(&pid, kerfPath.c_str(), &actions, &attributes, argv.data(), environ) ==
                0);
        posix_spawn_file_actions_destroy(&actions);
        posix_spawnattr_destroy(&attributes);

        // Wait until the temporary output exists and holds data (it has started writing).
        bool writing = false, exitedEarly = false;
        int status = 0;
        for (int i = 0; i < 60000 && !writing && !exitedEarly; ++i)
        {
            for (const auto& name : temporaries(t.dir))
                writing = writing || t.dir.getChildFile(name).getSize() > 0;
            if (!writing)
            {
                exitedEarly = ::waitpid(pid, &status, WNOHANG) == pid;
                ::usleep(1000);
            }
        }
        if (!exitedEarly)
        {
            ::kill(pid, sig);
            REQUIRE(::waitpid(pid, &status, 0) == pid);
        }
        INFO(errFile.loadFileAsString());
        REQUIRE(writing);
        REQUIRE_FALSE(exitedEarly);
        REQUIRE(WIFEXITED(status));
        CHECK(WEXITSTATUS(status) == 128 + sig);
        CHECK(errFile.loadFileAsString().contains("interrupted; no output written"));
        CHECK(temporaries(t.dir).empty());
        CHECK(snapshot(t.dir) == before); // no output, or the earlier one untouched
    }
}

TEST_CASE("cli: render keeps sample rate, channel count and length exactly", "[cli][safety]")
{
    // Issue 8 (data safety): the output has the input's rate, channels and length in
    // samples, whatever the input format; through an empty chain the samples themselves
    // pass unchanged into a float output. For the 32-bit integer file the expected values
    // are computed here (a code c reads as c / 2^31: the usual PCM-to-float scaling, common
    // practice); for the others they are what the file decodes to.
    TempDir t;
    t["empty.json"].replaceWithText(kEmptyChain);
    juce::AudioFormatManager formats;
    formats.registerBasicFormats();

    struct Input
    {
        const char* format;
        int bits;
        const char* name;
    };
    const std::vector<Input> inputs{{"wav", 16, "in16.wav"},   {"wav", 24, "in24.wav"},
                                    {"wav", 32, "inf32.wav"},  {"int32", 32, "in32.wav"},
                                    {"flac", 16, "in16.flac"}, {"flac", 24, "in24.flac"},
                                    {"aiff", 24, "in24.aiff"}};
    const int channelCounts[] = {1, 2, 6, 8};
    const double rates[] = {8000.0, 22050.0, 44100.0, 48000.0, 96000.0, 192000.0};
    int run = 0;
    for (const auto& input : inputs)
        for (const int channels : channelCounts)
        {
            const double rate = rates[run % 6];
            const int length = 4096 * 2 + 1 + 97 * run; // not a multiple of the block size
            const int outBits = run % 3 == 0 ? 32 : (run % 3 == 1 ? 24 : 16);
            ++run;
            INFO(input.name << ", " << channels << " channels, " << rate << " Hz, " << length
                            << " samples, output " << outBits << " bits");
            const auto inFile = t[input.name];
            auto signal = testSignal(channels, length, static_cast<std::uint32_t>(run));
            if (juce::String(input.format) == "int32")
            {
                std::vector<std::vector<std::int32_t>> codes(static_cast<std::size_t>(channels));
                for (int ch = 0; ch < channels; ++ch)
                    for (int i = 0; i < length; ++i)
                    {
                        // Codes with all 32 bits in use; as float they round to 24 bits.
                        const auto c = static_cast<std::int32_t>(
                            std::lround(signal.getSample(ch, i) * 2147483647.0));
                        codes[static_cast<std::size_t>(ch)].push_back(c);
                        signal.setSample(ch, i, static_cast<float>(c / 2147483648.0));
                    }
                writeWavInt32(inFile, codes, static_cast<int>(rate));
            }
            else
            {
                writeAudio(inFile, signal, rate, input.format, input.bits);
                // The reference is what the input file holds, as its decoder reads it.
                std::unique_ptr<juce::AudioFormatReader> back(formats.createReaderFor(inFile));
                REQUIRE(back != nullptr);
                REQUIRE(back->lengthInSamples == length);
                REQUIRE(back->read(&signal, 0, length, 0, true, true));
            }
            const auto outFile = t["out.wav"];
            const auto r =
                runKerf({"render", inFile.getFullPathName(), outFile.getFullPathName(), "--chain",
                         t["empty.json"].getFullPathName(), "--bits", juce::String(outBits)});
            INFO(r.output);
            REQUIRE(r.exitCode == 0);
            auto reader = openWav(outFile);
            REQUIRE(reader != nullptr);
            CHECK(reader->sampleRate == rate);
            CHECK(static_cast<int>(reader->numChannels) == channels);
            CHECK(reader->lengthInSamples == length);
            CHECK(static_cast<int>(reader->bitsPerSample) == outBits);
            CHECK(reader->usesFloatingPointData == (outBits == 32));
            juce::AudioBuffer<float> out(channels, length);
            REQUIRE(reader->read(&out, 0, length, 0, true, true));
            // Float output: the same samples; PCM output: within the dither's two LSB.
            const double tolerance = outBits == 32 ? 0.0 : 2.0 / std::ldexp(1.0, outBits - 1);
            double worst = 0.0;
            for (int ch = 0; ch < channels; ++ch)
                for (int i = 0; i < length; ++i)
                    worst = std::max(worst, std::abs(static_cast<double>(out.getSample(ch, i)) -
                                                     signal.getSample(ch, i)));
            CHECK(worst <= tolerance);
        }

    // An input with no samples gives an output with no samples.
    writeWav(t["none.wav"], juce::AudioBuffer<float>(2, 0), 44100.0, 16);
    const auto r =
        runKerf({"render", t["none.wav"].getFullPathName(), t["none-out.wav"].getFullPathName(),
                 "--chain", t["empty.json"].getFullPathName()});
    INFO(r.output);
    REQUIRE(r.exitCode == 0);
    auto reader = openWav(t["none-out.wav"]);
    REQUIRE(reader != nullptr);
    CHECK(reader->lengthInSamples == 0);
    CHECK(reader->numChannels == 2);
    CHECK(reader->sampleRate == 44100.0);
}

TEST_CASE("cli: float output keeps overs; PCM output counts exactly the samples it clips",
          "[cli][safety]")
{
    TempDir t;
    const double rate = 48000.0;
    const int n = 48000;

    SECTION("a +6 dB section: the float file keeps the overs and says how many")
    {
        // Cookbook peaking section (R. Bristow-Johnson, Audio EQ Cookbook): gain at f0 is
        // exactly the set gain, so a 0.8 sine at f0 comes out near 0.8 * 10^(6/20) = 1.6.
        // The expected samples come from the Dsp library (render equals it bit for bit,
        // tested above).
        const char* chainText = R"({"format": "kerf-chain", "version": 1, "stages": [
          {"type": "peaking", "freq_hz": 1000, "gain_db": 6, "q": 1, "design": "bilinear"}]})";
        t["plus6.json"].replaceWithText(chainText);
        juce::AudioBuffer<float> in(1, n);
        for (int i = 0; i < n; ++i)
            in.setSample(0, i,
                         static_cast<float>(0.8 * std::sin(2.0 * juce::MathConstants<double>::pi *
                                                           1000.0 * i / rate)));
        writeWav(t["in.wav"], in, rate, 32);
        const auto chain = parseChainJson(chainText);
        REQUIRE(chain.ok);
        dsp::ChainProcessor direct;
        direct.prepare(rate, 512, 1);
        direct.setChain(chain.chain);
        juce::AudioBuffer<float> expected(in);
        direct.process(expected.getArrayOfWritePointers(), 1, n);
        int overs = 0;
        for (int i = 0; i < n; ++i)
            overs += std::abs(expected.getSample(0, i)) > 1.0f ? 1 : 0;
        REQUIRE(overs > 1000);

        const auto r =
            runKerf({"render", t["in.wav"].getFullPathName(), t["out.wav"].getFullPathName(),
                     "--chain", t["plus6.json"].getFullPathName()});
        INFO(r.output);
        REQUIRE(r.exitCode == 0);
        CHECK(r.output.contains(juce::String(overs) + " samples above full scale"));
        auto reader = openWav(t["out.wav"]);
        REQUIRE(reader != nullptr);
        juce::AudioBuffer<float> out(1, n);
        REQUIRE(reader->read(&out, 0, n, 0, true, true));
        int mismatches = 0;
        float peak = 0.0f;
        for (int i = 0; i < n; ++i)
        {
            mismatches += out.getSample(0, i) != expected.getSample(0, i) ? 1 : 0;
            peak = std::max(peak, std::abs(out.getSample(0, i)));
        }
        CHECK(mismatches == 0);
        CHECK(peak == Approx(0.8 * std::pow(10.0, 6.0 / 20.0)).epsilon(0.01));
    }

    SECTION("PCM: the count equals the samples beyond full scale")
    {
        // Known overs through an empty chain: 37 samples at +-1.25 or +-1.5, the rest within
        // +-0.5, so the dither (at most 1 LSB each way) cannot make or save a clip.
        t["empty.json"].replaceWithText(kEmptyChain);
        auto in = testSignal(2, n, 7);
        in.applyGain(0.5f / 0.9f);
        int known = 0;
        for (int k = 0; k < 37; ++k)
        {
            const int ch = k % 2, i = 1000 + 997 * k;
            in.setSample(ch, i, k % 3 == 0 ? -1.5f : (k % 3 == 1 ? 1.25f : 1.5f));
            ++known;
        }
        writeWav(t["in.wav"], in, rate, 32);
        for (const int bits : {16, 24})
        {
            INFO(bits << " bits");
            const auto r = runKerf(
                {"render", t["in.wav"].getFullPathName(), t["out.wav"].getFullPathName(), "--chain",
                 t["empty.json"].getFullPathName(), "--bits", juce::String(bits)});
            INFO(r.output);
            REQUIRE(r.exitCode == 0);
            CHECK(r.output.contains(juce::String(known) + " samples clipped at full scale in the " +
                                    juce::String(bits) + "-bit output"));
            // Read back: the clipped samples sit at the largest code of their sign.
            auto reader = openWav(t["out.wav"]);
            REQUIRE(reader != nullptr);
            juce::AudioBuffer<float> out(2, n);
            REQUIRE(reader->read(&out, 0, n, 0, true, true));
            const float top = static_cast<float>(1.0 - std::ldexp(1.0, 1 - bits));
            int atFullScale = 0;
            for (int ch = 0; ch < 2; ++ch)
                for (int i = 0; i < n; ++i)
                    atFullScale += (out.getSample(ch, i) >= top || out.getSample(ch, i) <= -1.0f);
            CHECK(atFullScale == known);
        }
    }
}
