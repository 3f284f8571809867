// The processor's parameters and state, exercised directly.
#include "ChainFile.h"
#include "Dsp/SpeechLikeSource.h"
#include "ExampleChains.h"
#include "FactoryPresets.h"
#include "PluginProcessor.h"
#include "Response/SystemFunction.h"

#include <catch2/catch.hpp>

#include <random>

using namespace kerf;

namespace
{
struct JuceGuard
{
    juce::ScopedJuceInitialiser_GUI init;
};
} // namespace

TEST_CASE("plugin: state round trip restores every parameter exactly", "[plugin]")
{
    // Common practice: a host session reopens with every parameter as it was saved.
    JuceGuard guard;
    const unsigned seed = 20261202u;
    INFO("seed " << seed);
    std::mt19937 rng(seed);
    std::uniform_real_distribution<float> u(0.0f, 1.0f);

    KerfProcessor a;
    for (auto* p : a.getParameters())
        p->setValueNotifyingHost(u(rng));
    juce::MemoryBlock saved;
    a.getStateInformation(saved);

    KerfProcessor b;
    b.setStateInformation(saved.getData(), static_cast<int>(saved.getSize()));
    CHECK(b.lastStateProblem().isEmpty());
    const auto pa = a.getParameters();
    const auto pb = b.getParameters();
    REQUIRE(pa.size() == pb.size());
    // 24 slots of 10, the echo stage (on, method, terms, 4 x delay and gain), 3 output,
    // the glide time, 2 combs of 9 (the delay change among them), the bypass.
    REQUIRE(pa.size() == kNumSectionSlots * 10 + 3 + 2 * dsp::kMaxEchoReflections + 3 + 1 +
                             kNumCombSlots * 9 + 1);
    for (int i = 0; i < pa.size(); ++i)
    {
        auto* ra = dynamic_cast<juce::RangedAudioParameter*>(pa[i]);
        auto* rb = dynamic_cast<juce::RangedAudioParameter*>(pb[i]);
        INFO(ra->getParameterID());
        CHECK(ra->getParameterID() == rb->getParameterID());
        CHECK(ra->convertFrom0to1(ra->getValue()) == rb->convertFrom0to1(rb->getValue()));
    }
}

TEST_CASE("plugin: older state fills missing parameters with defaults", "[plugin]")
{
    // Common practice: parameters an old session lacks take defaults, not current values.
    JuceGuard guard;
    KerfProcessor a;
    a.state().getParameter(ids::slotGain(0))->setValueNotifyingHost(0.9f);
    a.state().getParameter(ids::slotGain(5))->setValueNotifyingHost(0.9f);
    juce::MemoryBlock saved;
    a.getStateInformation(saved);
    // Remove slot 5's gain from the saved XML, as if written before it existed.
    auto xml =
        juce::AudioProcessor::getXmlFromBinary(saved.getData(), static_cast<int>(saved.getSize()));
    REQUIRE(xml != nullptr);
    for (auto* child : xml->getChildIterator())
        if (child->getStringAttribute("id") == ids::slotGain(5))
        {
            xml->removeChildElement(child, true);
            break;
        }
    juce::MemoryBlock older;
    juce::AudioProcessor::copyXmlToBinary(*xml, older);

    KerfProcessor b;
    b.state().getParameter(ids::slotGain(5))->setValueNotifyingHost(0.1f); // "current"
    b.setStateInformation(older.getData(), static_cast<int>(older.getSize()));
    CHECK(b.state().getRawParameterValue(ids::slotGain(0))->load() ==
          a.state().getRawParameterValue(ids::slotGain(0))->load());
    CHECK(b.state().getRawParameterValue(ids::slotGain(5))->load() == 0.0f);
}

TEST_CASE("plugin: corrupt or foreign state gives defaults and a reason", "[plugin]")
{
    // Common practice: never crash on a damaged session; the reason goes to the log
    // (juce::Logger, which hosts and the standalone app route to their logs).
    JuceGuard guard;
    struct Capture : juce::Logger
    {
        juce::StringArray lines;
        void logMessage(const juce::String& message) override { lines.add(message); }
    } log;
    juce::Logger::setCurrentLogger(&log);
    KerfProcessor p;
    p.state().getParameter(ids::slotGain(2))->setValueNotifyingHost(0.8f);
    const char junk[] = "definitely not a plugin state";
    p.setStateInformation(junk, sizeof(junk));
    CHECK(p.lastStateProblem().isNotEmpty());
    CHECK(p.state().getRawParameterValue(ids::slotGain(2))->load() == 0.0f);
    p.setStateInformation(nullptr, 0);
    CHECK(p.lastStateProblem().isNotEmpty());
    juce::Logger::setCurrentLogger(nullptr);
    REQUIRE(log.lines.size() == 2);
    CHECK(log.lines[0].contains(p.lastStateProblem()));
}

TEST_CASE("plugin: text entry understands units and the k suffix", "[plugin]")
{
    // Issue examples for typed values: "2.5k", "-3 dB", "120 Hz"; and the forms the plugin
    // itself displays ("1.25 kHz", "12.50 ms"), so a displayed value typed back is the same.
    JuceGuard guard;
    KerfProcessor p;
    auto typed = [&p](const juce::String& id, const juce::String& text)
    {
        auto* param = p.state().getParameter(id);
        return param->convertFrom0to1(param->getValueForText(text));
    };
    CHECK(typed(ids::slotFreq(0), "2.5k") == 2500.0f);
    CHECK(typed(ids::slotFreq(0), "120 Hz") == 120.0f);
    CHECK(typed(ids::slotFreq(0), "1.25 kHz") == 1250.0f);
    CHECK(typed(ids::slotFreq(0), "440") == 440.0f);
    CHECK(typed(ids::slotGain(0), "-3 dB") == -3.0f);
    CHECK(typed(ids::slotGain(0), "4.5db") == 4.5f);
    CHECK(typed(ids::outputGain, "-6.0 dB") == -6.0f);
    CHECK(typed(ids::echoDelay(0), "12.50 ms") == 12.5f);
    CHECK(typed(ids::glideMs, "35 ms") == 35.0f);
    CHECK(typed(ids::comb(0, "pitch"), "220 Hz") == 220.0f);
    // Out of range is held at the range's end.
    CHECK(typed(ids::slotFreq(0), "90k") ==
          p.state().getParameter(ids::slotFreq(0))->getNormalisableRange().end);
}

TEST_CASE("plugin: processing equals the Dsp chain and reports zero latency", "[plugin]")
{
    // Project invariant: the plugin path is the Dsp path (same code, same numbers).
    JuceGuard guard;
    KerfProcessor p;
    const auto& presets = factoryPresets();
    REQUIRE(presets.size() >= 1);
    p.setCurrentProgram(1);
    p.state().getParameter(ids::protectOn)->setValueNotifyingHost(0.0f);
    const double fs = 48000.0;
    p.setPlayConfigDetails(2, 2, fs, 512);
    p.prepareToPlay(fs, 512);
    CHECK(p.getLatencySamples() == 0);

    juce::AudioBuffer<float> buffer(2, 512);
    buffer.clear();
    buffer.setSample(0, 0, 1.0f);
    buffer.setSample(1, 0, 0.5f);
    juce::MidiBuffer midi;
    p.processBlock(buffer, midi);

    const auto ir = kerf::dsp::impulseResponse(p.exportChain(), fs, 512);
    for (int i = 0; i < 512; ++i)
    {
        CHECK(buffer.getSample(0, i) == Approx(ir[static_cast<std::size_t>(i)]).margin(1e-6));
        CHECK(buffer.getSample(1, i) == Approx(0.5 * ir[static_cast<std::size_t>(i)]).margin(1e-6));
    }
}

TEST_CASE("plugin: output protection holds the ceiling", "[plugin]")
{
    // Common practice (safety): nothing above the ceiling leaves the plugin; NaN becomes 0.
    JuceGuard guard;
    KerfProcessor p;
    p.setPlayConfigDetails(2, 2, 48000.0, 64);
    p.prepareToPlay(48000.0, 64);
    juce::AudioBuffer<float> buffer(2, 64);
    for (int i = 0; i < 64; ++i)
    {
        buffer.setSample(0, i, 4.0f);
        buffer.setSample(1, i, -4.0f);
    }
    buffer.setSample(0, 10, std::numeric_limits<float>::quiet_NaN());
    juce::MidiBuffer midi;
    p.processBlock(buffer, midi);
    const float ceiling = juce::Decibels::decibelsToGain(-1.0f);
    for (int ch = 0; ch < 2; ++ch)
        for (int i = 0; i < 64; ++i)
        {
            CHECK(std::isfinite(buffer.getSample(ch, i)));
            CHECK(std::abs(buffer.getSample(ch, i)) <= ceiling + 1e-7f);
        }
    CHECK(p.takeProtectionCount() > 0);
}

TEST_CASE("plugin: NaN and infinite input never reach the output, bypassed or not",
          "[plugin][robustness]")
{
    // Common practice: a host or an upstream plugin may hand over NaN or infinities; with
    // the output protection off, processing and bypassing alike give finite output, the
    // bad samples count as silence and the processor counts the blocks.
    JuceGuard guard;
    KerfProcessor p;
    p.setPlayConfigDetails(2, 2, 48000.0, 256);
    p.state().getParameter(ids::protectOn)->setValueNotifyingHost(0.0f);
    p.state().getParameter(ids::slotOn(0))->setValueNotifyingHost(1.0f);
    p.prepareToPlay(48000.0, 256);
    juce::AudioBuffer<float> buffer(2, 256);
    juce::MidiBuffer midi;
    bool finite = true;
    for (int block = 0; block < 40; ++block)
    {
        if (block == 20) // bypassed from here (a crossfade, then the input itself)
            p.getBypassParameter()->setValueNotifyingHost(1.0f);
        for (int i = 0; i < 256; ++i)
            for (int ch = 0; ch < 2; ++ch)
                buffer.setSample(ch, i, 0.1f * std::sin(0.05f * static_cast<float>(i + ch)));
        if (block % 5 == 1)
        {
            buffer.setSample(0, 7, std::numeric_limits<float>::quiet_NaN());
            buffer.setSample(1, 100, std::numeric_limits<float>::infinity());
        }
        p.processBlock(buffer, midi);
        for (int ch = 0; ch < 2; ++ch)
            for (int i = 0; i < 256; ++i)
                finite = finite && std::isfinite(buffer.getSample(ch, i));
    }
    CHECK(finite);
    CHECK(p.nonFiniteEvents() == 8u);
}

TEST_CASE("plugin: export then import of a chain restores the same chain", "[plugin]")
{
    // Common practice: export/import round trip.
    JuceGuard guard;
    KerfProcessor p;
    const auto parsed = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 1000, "gain_db": 6, "q": 1.0, "enabled": true},
        {"type": "peaking", "freq_hz": 250, "gain_db": -3.5, "q": 2.0, "enabled": true}]})");
    REQUIRE(parsed.ok);
    CHECK(p.importChain(parsed.chain).isEmpty());
    const auto back = p.exportChain();
    REQUIRE(back.numStages == 2);
    CHECK(back.stages[0].freqHz == Approx(1000.0).epsilon(1e-6));
    CHECK(back.stages[1].gainDb == Approx(-3.5).epsilon(1e-6));
    CHECK(back.stages[1].q == Approx(2.0).epsilon(1e-6));
}

TEST_CASE("plugin: every section type imports, exports and processes as the Dsp chain", "[plugin]")
{
    // Project invariant: plugin path == Dsp path, and import/export keeps every field.
    JuceGuard guard;
    auto parsed = parseChainJson(kerf::test::kEveryTypeChain);
    REQUIRE(parsed.ok);
    parsed.chain.stages[8].enabled = true; // the plugin exports only the slots that are on
    KerfProcessor p;
    CHECK(p.importChain(parsed.chain).isEmpty());
    const auto back = p.exportChain();
    REQUIRE(back.numStages == parsed.chain.numStages);
    for (int i = 0; i < back.numStages; ++i)
    {
        const auto& a = back.stages[i];
        const auto& b = parsed.chain.stages[i];
        INFO("stage " << i);
        CHECK(a.type == b.type);
        CHECK(a.freqHz == Approx(b.freqHz).epsilon(1e-6));
        CHECK(a.order == b.order);
        CHECK(a.alignment == b.alignment);
        CHECK(a.channels == b.channels);
        CHECK(a.design == b.design);
        CHECK(a.q == Approx(b.q).epsilon(1e-6));
    }
    p.state().getParameter(ids::protectOn)->setValueNotifyingHost(0.0f);
    p.setPlayConfigDetails(2, 2, 48000.0, 1024);
    p.prepareToPlay(48000.0, 1024);
    juce::AudioBuffer<float> buffer(2, 1024);
    buffer.clear();
    buffer.setSample(0, 0, 0.5f);
    buffer.setSample(1, 0, 0.25f);
    juce::MidiBuffer midi;
    p.processBlock(buffer, midi);
    kerf::dsp::ChainProcessor direct;
    direct.prepare(48000.0, 1024, 2);
    direct.setChain(back);
    juce::AudioBuffer<float> expected(2, 1024);
    expected.clear();
    expected.setSample(0, 0, 0.5f);
    expected.setSample(1, 0, 0.25f);
    direct.process(expected.getArrayOfWritePointers(), 2, 1024);
    for (int ch = 0; ch < 2; ++ch)
        for (int i = 0; i < 1024; ++i)
            CHECK(buffer.getSample(ch, i) == expected.getSample(ch, i));
}

TEST_CASE("plugin: listening for room echo proposes values that cancel it", "[plugin][echo]")
{
    // Issue bars for one reflection (delay within 1 sample, gain within 0.05) and ERLE as
    // ITU-T G.168 defines it (echo power over residual echo power) >= 20 dB once applied.
    // Deterministic speech-like source (Tests/Dsp/SpeechLikeSource.h); invented echo.
    JuceGuard guard;
    const double rate = 48000.0, delaySamples = 1201.7, gain = -0.45; // 25 ms
    const int block = 512;
    const auto clean = kerf::test::speechLike(rate, EchoCapture::kCaptureSeconds + 1.0, 77);
    const auto late = kerf::test::delayedBySinc(clean, delaySamples, 32);
    const int n = static_cast<int>(clean.size());

    KerfProcessor p;
    p.state().getParameter(ids::protectOn)->setValueNotifyingHost(0.0f);
    p.setPlayConfigDetails(2, 2, rate, block);
    p.prepareToPlay(rate, block);
    auto play = [&](std::vector<float>* out)
    {
        juce::AudioBuffer<float> buffer(2, block);
        juce::MidiBuffer midi;
        for (int start = 0; start + block <= n; start += block)
        {
            for (int i = 0; i < block; ++i)
            {
                const auto k = static_cast<std::size_t>(start + i);
                const float v = static_cast<float>(clean[k] + gain * late[k]);
                buffer.setSample(0, i, v);
                buffer.setSample(1, i, v);
            }
            p.processBlock(buffer, midi);
            if (out != nullptr)
                for (int i = 0; i < block; ++i)
                    out->push_back(buffer.getSample(0, i));
        }
    };

    p.echoCapture().start();
    play(nullptr);
    for (int waited = 0; p.echoCapture().state() != EchoCapture::State::ready && waited < 60000;
         waited += 50)
        juce::Thread::sleep(50);
    REQUIRE(p.echoCapture().state() == EchoCapture::State::ready);
    kerf::dsp::EchoEstimate estimate;
    REQUIRE(p.echoCapture().takeProposal(estimate));
    REQUIRE(estimate.reflections.size() >= 1);
    INFO("found delay " << estimate.reflections[0].delaySamples << " gain "
                        << estimate.reflections[0].gain);
    CHECK(std::abs(estimate.reflections[0].delaySamples - delaySamples) <= 1.0);
    CHECK(std::abs(estimate.reflections[0].gain - gain) <= 0.05);

    p.applyEchoEstimate(estimate);
    CHECK(p.state().getRawParameterValue(ids::echoOn)->load() == 1.0f);
    p.reset();
    std::vector<float> out;
    play(&out);
    double echoPower = 0.0, residualPower = 0.0;
    for (std::size_t i = 0; i < out.size(); ++i)
    {
        echoPower += gain * late[i] * gain * late[i];
        residualPower += (out[i] - clean[i]) * (out[i] - clean[i]);
    }
    const double erle = 10.0 * std::log10(echoPower / residualPower);
    INFO("ERLE " << erle << " dB");
    CHECK(erle >= 20.0);
}

TEST_CASE("plugin: comb and echo stages import, export and process as the Dsp chain",
          "[plugin][comb][echo]")
{
    // Project invariant: plugin path == Dsp path, and import/export keeps every field.
    JuceGuard guard;
    const auto parsed = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "echo_cancel", "reflections": [{"delay_ms": 12.5, "gain": 0.4}]},
      {"type": "peaking", "freq_hz": 1000, "gain_db": -3, "q": 2},
      {"type": "comb", "mode": "feedback", "pitch_hz": 220, "gain": 0.5, "damping_hz": 4000, "mix": 0.5},
      {"type": "comb", "delay_ms": 2.5, "gain": -0.6}]})");
    REQUIRE(parsed.ok);
    KerfProcessor p;
    CHECK(p.importChain(parsed.chain).isEmpty());
    const auto back = p.exportChain();
    REQUIRE(back.numStages == 4);
    CHECK(back.stages[0].type == kerf::dsp::StageType::echoCancel);
    CHECK(back.stages[0].echo.reflections[0].delayMs == Approx(12.5).epsilon(1e-6));
    CHECK(back.stages[0].echo.reflections[0].gain == Approx(0.4).epsilon(1e-4));
    CHECK(back.stages[2].type == kerf::dsp::StageType::comb);
    CHECK(back.stages[2].comb.pitchHz == Approx(220.0).epsilon(1e-6));
    CHECK(back.stages[2].comb.dampingHz == Approx(4000.0).epsilon(1e-6));
    CHECK(back.stages[3].comb.delayMs == Approx(2.5).epsilon(1e-6));
    CHECK(back.stages[3].comb.gain == Approx(-0.6).epsilon(1e-4));
    // The host is told how long the feedback comb and the echo inverse ring on.
    CHECK(p.getTailLengthSeconds() ==
          Approx(kerf::dsp::chainTailSeconds(back, 48000.0)).epsilon(1e-9));
    CHECK(p.getTailLengthSeconds() > 0.05);

    p.state().getParameter(ids::protectOn)->setValueNotifyingHost(0.0f);
    p.setPlayConfigDetails(2, 2, 48000.0, 512);
    p.prepareToPlay(48000.0, 512);
    kerf::dsp::ChainProcessor direct;
    direct.prepare(48000.0, 512, 2);
    direct.setChain(back);
    juce::AudioBuffer<float> a(2, 512), b(2, 512);
    juce::MidiBuffer midi;
    for (int blockIndex = 0; blockIndex < 8; ++blockIndex)
    {
        a.clear();
        if (blockIndex == 0)
        {
            a.setSample(0, 0, 0.5f);
            a.setSample(1, 3, 0.25f);
        }
        b.makeCopyOf(a);
        p.processBlock(a, midi);
        direct.process(b.getArrayOfWritePointers(), 2, 512);
        for (int ch = 0; ch < 2; ++ch)
            for (int i = 0; i < 512; ++i)
                REQUIRE(a.getSample(ch, i) == b.getSample(ch, i));
    }

    // More stages than the plugin holds, and offline-only stages, are refused with a reason.
    auto tooMany = parsed.chain;
    tooMany.push(parsed.chain.stages[3]);
    CHECK(p.importChain(tooMany).contains("comb"));
    auto offline = parsed.chain;
    offline.stages[0].nonCausal = true;
    CHECK(p.importChain(offline).contains("non_causal"));
}
