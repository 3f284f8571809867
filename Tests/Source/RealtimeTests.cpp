// Realtime safety: the audio callback never allocates. The test binary replaces the global
// allocation functions with counting ones (Tests/Dsp/AllocationHook.cpp, shared with the DSP
// tests) that count while a block is being processed.
#include "ChainFile.h"
#include "Dsp/AllocationHook.h"
#include "LiveAnalyzer.h"
#include "PluginProcessor.h"

#include <catch2/catch.hpp>

#include <cmath>
#include <random>

namespace
{
/// Fills the first n samples of both channels with noise, processes them as one block with
/// the allocation count on (as the audio thread would), and says whether all came out finite.
bool processNoiseCounted(kerf::KerfProcessor& p, juce::AudioBuffer<float>& buffer, int n,
                         std::uniform_real_distribution<float>& u, std::mt19937& rng)
{
    juce::AudioBuffer<float> view(buffer.getArrayOfWritePointers(), 2, n);
    for (int ch = 0; ch < 2; ++ch)
        for (int i = 0; i < n; ++i)
            view.setSample(ch, i, 0.1f * (u(rng) - 0.5f));
    juce::MidiBuffer midi;
    kerf::allochook::counting = true;
    p.processBlock(view, midi);
    kerf::allochook::counting = false;
    bool finite = true;
    for (int ch = 0; ch < 2; ++ch)
        for (int i = 0; i < n; ++i)
            finite = finite && std::isfinite(view.getSample(ch, i));
    return finite;
}
} // namespace

TEST_CASE("realtime: processing with changing parameters never allocates", "[plugin]")
{
    // Common practice for audio callbacks (no heap allocation on the audio thread); the
    // parameter changes happen between blocks, as a host's message thread would make them.
    juce::ScopedJuceInitialiser_GUI init;
    kerf::KerfProcessor p;
    const auto parsed = kerf::parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "high_pass", "freq_hz": 60, "order": 8},
      {"type": "low_shelf", "freq_hz": 150, "gain_db": 4, "channels": "left"},
      {"type": "peaking", "freq_hz": 900, "gain_db": -7, "q": 3},
      {"type": "notch", "freq_hz": 3000, "q": 6, "channels": "mid"},
      {"type": "band_pass", "freq_hz": 2000, "q": 0.5, "channels": "side"},
      {"type": "tilt", "freq_hz": 1200, "gain_db": 3, "channels": "right"}]})");
    REQUIRE(parsed.ok);
    p.importChain(parsed.chain);
    p.setPlayConfigDetails(2, 2, 48000.0, 256);
    p.prepareToPlay(48000.0, 256);
    juce::AudioBuffer<float> buffer(2, 256);
    juce::MidiBuffer midi;
    const unsigned seed = 4242u;
    INFO("seed " << seed);
    std::mt19937 rng(seed);
    std::uniform_real_distribution<float> u(0.0f, 1.0f);
    auto params = p.getParameters();
    p.echoCapture().start(); // the echo listener records on the audio thread meanwhile
    for (int block = 0; block < 400; ++block)
    {
        for (int k = 0; k < 4; ++k) // a few parameters move before every block
            params[static_cast<int>(u(rng) * static_cast<float>(params.size() - 1))]
                ->setValueNotifyingHost(u(rng));
        for (int ch = 0; ch < 2; ++ch)
            for (int i = 0; i < 256; ++i)
                buffer.setSample(ch, i, 0.1f * (u(rng) - 0.5f));
        kerf::allochook::counting = true;
        p.processBlock(buffer, midi);
        kerf::allochook::counting = false;
    }
    CHECK(kerf::allochook::count() == 0);
    CHECK(p.echoCapture().progress() > 0.0f); // it did record
}

TEST_CASE("realtime: glides, crossfades, preset loads and A/B switches never allocate",
          "[plugin][smoothing]")
{
    // Common practice (no heap allocation on the audio thread), while the click-free layer
    // works its hardest: every block size from 1 to 700, the glide time itself automated,
    // parameters jumping (crossfades) and creeping (glides), factory programs loaded, two
    // saved states swapped, the comparison slots switched, steps undone and redone, "all
    // flat" pressed and the bypass switched between blocks, as a host's or editor's message
    // thread would. Blocks up to 700 samples against 700 prepared; a few longer ones (split
    // inside for the bypass copy) too.
    juce::ScopedJuceInitialiser_GUI init;
    kerf::KerfProcessor p;
    p.setPlayConfigDetails(2, 2, 48000.0, 700);
    p.prepareToPlay(48000.0, 700);
    juce::MemoryBlock stateA, stateB;
    p.setCurrentProgram(1);
    p.getStateInformation(stateA);
    p.setCurrentProgram(p.getNumPrograms() - 1);
    p.getStateInformation(stateB);
    juce::AudioBuffer<float> buffer(2, 1500);
    const unsigned seed = 5151u;
    INFO("seed " << seed);
    std::mt19937 rng(seed);
    std::uniform_real_distribution<float> u(0.0f, 1.0f);
    auto params = p.getParameters();
    auto* glide = p.state().getParameter(kerf::ids::glideMs);
    REQUIRE(glide != nullptr);
    bool finite = true;
    for (int block = 0; block < 1500; ++block)
    {
        const int n = block % 50 == 49 ? 1500 : 1 + static_cast<int>(u(rng) * 699.0f);
        const float what = u(rng);
        if (what < 0.05f)
            p.setCurrentProgram(static_cast<int>(u(rng) * static_cast<float>(p.getNumPrograms())));
        else if (what < 0.10f)
        {
            const auto& s = block % 2 ? stateA : stateB;
            p.setStateInformation(s.getData(), static_cast<int>(s.getSize()));
        }
        else if (what < 0.15f)
            glide->setValueNotifyingHost(u(rng));
        else if (what < 0.18f)
            p.switchSlot(); // the A/B switch of the comparison slots
        else if (what < 0.20f)
            p.undo();
        else if (what < 0.21f)
            p.redo();
        else if (what < 0.22f)
            p.setAllFlat();
        else if (what < 0.25f) // the host's bypass switch (crossfaded)
            p.getBypassParameter()->setValueNotifyingHost(u(rng) < 0.5f ? 1.0f : 0.0f);
        else
            for (int k = 0; k < 4; ++k)
            {
                auto* q = params[static_cast<int>(u(rng) * static_cast<float>(params.size() - 1))];
                // Half creep (small moves glide), half jump (crossfades).
                const float v =
                    u(rng) < 0.5f
                        ? juce::jlimit(0.0f, 1.0f, q->getValue() + 0.02f * (u(rng) - 0.5f))
                        : u(rng);
                q->setValueNotifyingHost(v);
            }
        finite = processNoiseCounted(p, buffer, n, u, rng) && finite;
    }
    CHECK(kerf::allochook::count() == 0);
    CHECK(finite);
}

TEST_CASE("realtime: the live analyzer's feed never allocates, its thread draining meanwhile",
          "[plugin][analyzer]")
{
    // Common practice (no heap allocation on the audio thread). The analyzer is on, its
    // background thread pops the FIFO and analyses concurrently; the editor-side calls
    // (new bands, snapshots taken) happen between blocks as the message thread would.
    juce::ScopedJuceInitialiser_GUI init;
    kerf::KerfProcessor p;
    p.setPlayConfigDetails(2, 2, 48000.0, 256);
    p.prepareToPlay(48000.0, 256);
    kerf::LiveAnalyzer live(p);
    std::vector<double> edges;
    for (int c = 0; c <= 500; ++c)
        edges.push_back(20.0 * std::pow(1000.0, c / 500.0));
    live.setBandEdges(edges);
    live.setEnabled(true); // with its thread
    REQUIRE(p.analyzerFeedOn());
    juce::AudioBuffer<float> buffer(2, 256);
    juce::MidiBuffer midi;
    std::mt19937 rng(777u);
    std::uniform_real_distribution<float> u(-0.5f, 0.5f);
    int snapshots = 0;
    for (int block = 0; block < 600; ++block)
    {
        for (int ch = 0; ch < 2; ++ch)
            for (int i = 0; i < 256; ++i)
                buffer.setSample(ch, i, u(rng));
        kerf::allochook::counting = true;
        p.processBlock(buffer, midi);
        kerf::allochook::counting = false;
        if (block % 8 == 0)
        {
            snapshots += live.update() ? 1 : 0;
            juce::Thread::sleep(1); // let the analysis thread run
        }
    }
    CHECK(kerf::allochook::count() == 0);
    // Everything was offered: taken, or dropped and counted when the thread fell behind.
    CHECK(p.analyzerFifo().pushed() + p.analyzerFifo().dropped() == 600u * 256u);
    live.setEnabled(false);
    CHECK_FALSE(p.analyzerFeedOn());
    live.pump(); // whatever was left
    CHECK(live.analysis().frames() > 0);
    CHECK(snapshots + (live.update() ? 1 : 0) > 0);
}

TEST_CASE("realtime: comb delay sweeps never allocate", "[plugin][comb]")
{
    // Common practice (no heap allocation on the audio thread): both combs on with their
    // delay change set to Sweep, their delay, pitch and tuning moved before most blocks
    // (sweeps taken over mid-way), the glide time automated, blocks of 1 - 700 samples.
    juce::ScopedJuceInitialiser_GUI init;
    kerf::KerfProcessor p;
    p.setPlayConfigDetails(2, 2, 48000.0, 700);
    p.prepareToPlay(48000.0, 700);
    auto set = [&p](const juce::String& id, float value)
    {
        auto* q = p.state().getParameter(id);
        REQUIRE(q != nullptr);
        q->setValueNotifyingHost(q->convertTo0to1(value));
    };
    for (int c = 0; c < kerf::kNumCombSlots; ++c)
    {
        set(kerf::ids::comb(c, "on"), 1.0f);
        set(kerf::ids::comb(c, "mode"), static_cast<float>(c)); // feedforward, feedback
        set(kerf::ids::comb(c, "gain"), 0.9f);
        set(kerf::ids::comb(c, "change"), 1.0f); // Sweep
    }
    juce::AudioBuffer<float> buffer(2, 700);
    std::mt19937 rng(6262u);
    std::uniform_real_distribution<float> u(0.0f, 1.0f);
    bool finite = true;
    const long long before = kerf::allochook::count();
    for (int block = 0; block < 1200; ++block)
    {
        const int n = 1 + static_cast<int>(u(rng) * 699.0f);
        const int c = static_cast<int>(u(rng) * kerf::kNumCombSlots) % kerf::kNumCombSlots;
        if (u(rng) < 0.7f)
            set(kerf::ids::comb(c, "delay"), 0.05f * std::pow(2000.0f, u(rng)));
        if (u(rng) < 0.3f)
            set(kerf::ids::comb(c, "pitch"), 20.0f * std::pow(250.0f, u(rng)));
        if (u(rng) < 0.1f)
            set(kerf::ids::comb(c, "tuning"), u(rng) < 0.5f ? 0.0f : 1.0f);
        if (u(rng) < 0.05f)
            set(kerf::ids::glideMs, 1000.0f * u(rng) * u(rng));
        finite = processNoiseCounted(p, buffer, n, u, rng) && finite;
    }
    CHECK(kerf::allochook::count() - before == 0);
    CHECK(finite);
}
