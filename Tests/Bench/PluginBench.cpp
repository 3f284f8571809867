// The plugin's own cost per host block: KerfProcessor::processBlock (parameters read inside
// the block, the chain, output gain and protection) with 24 stereo peaking sections in
// 512-sample float blocks, parameters still against every section's frequency, gain and Q
// automated, measured in the same run (scripts/bench prints the ratios of medians). The host
// side of automation (setValueNotifyingHost, which JUCE's VST3 wrapper calls on the audio
// thread before each block) is timed with it. On demand, never a timed unit test.
#include "BenchChain.h"
#include "Parameters.h"
#include "PluginProcessor.h"

#include <benchmark/benchmark.h>

#include <cmath>
#include <memory>
#include <random>
#include <vector>

namespace
{
using namespace kerf;
constexpr double kRate = 48000.0;
constexpr int kBlock = 512;
constexpr int kSections = bench::kBenchSections;

/// One host automation step: the normalised values of every section's frequency, gain and
/// Q for a chain, set as JUCE's VST3 wrapper sets them (setValueNotifyingHost).
struct Targets
{
    std::vector<juce::RangedAudioParameter*> params;
    std::vector<float> values[2];
};

Targets targetsFor(KerfProcessor& p, dsp::DesignMode mode)
{
    Targets t;
    auto& apvts = p.state();
    for (int i = 0; i < kSections; ++i)
        for (const auto& id : {ids::slotFreq(i), ids::slotGain(i), ids::slotQ(i)})
            t.params.push_back(apvts.getParameter(id));
    for (int k = 0; k < 2; ++k)
    {
        const auto c = bench::benchChain(mode, k + 1);
        for (int i = 0; i < kSections; ++i)
        {
            const auto& s = c.stages[static_cast<std::size_t>(i)];
            const float plain[3] = {static_cast<float>(s.freqHz), static_cast<float>(s.gainDb),
                                    static_cast<float>(s.q)};
            for (int j = 0; j < 3; ++j)
                t.values[k].push_back(
                    t.params[static_cast<std::size_t>(3 * i + j)]->convertTo0to1(plain[j]));
        }
    }
    return t;
}

/// everyBlocks = 0: still; otherwise the host automates every section parameter to new
/// values every that many blocks (glideMs: the plugin's glide time).
void run(benchmark::State& state, dsp::DesignMode mode, int everyBlocks, float glideMs)
{
    juce::ScopedJuceInitialiser_GUI init;
    auto p = std::make_unique<KerfProcessor>();
    if (const auto error = p->importChain(bench::benchChain(mode, 0)); error.isNotEmpty())
    {
        state.SkipWithError(error.toRawUTF8());
        return;
    }
    auto* glide = p->state().getParameter(ids::glideMs);
    glide->setValueNotifyingHost(glide->convertTo0to1(glideMs));
    p->setPlayConfigDetails(2, 2, kRate, kBlock);
    p->prepareToPlay(kRate, kBlock);
    juce::AudioBuffer<float> buffer(2, kBlock);
    std::mt19937 rng(7);
    std::uniform_real_distribution<float> u(-0.25f, 0.25f);
    auto fill = [&]
    {
        for (int ch = 0; ch < 2; ++ch)
            for (int i = 0; i < kBlock; ++i)
                buffer.setSample(ch, i, u(rng));
    };
    fill();
    juce::MidiBuffer midi;
    p->processBlock(buffer, midi);
    const Targets t = targetsFor(*p, mode);
    int block = 0, phase = 0;
    for (auto _ : state)
    {
        if (everyBlocks > 0 && block++ % everyBlocks == 0)
        {
            const auto& v = t.values[phase++ % 2];
            for (std::size_t k = 0; k < t.params.size(); ++k)
                t.params[k]->setValueNotifyingHost(v[k]);
        }
        p->processBlock(buffer, midi);
        benchmark::DoNotOptimize(buffer.getSample(0, 0));
        if (std::abs(buffer.getSample(0, 0)) > 10.0f)
            fill();
    }
    state.SetItemsProcessed(state.iterations() * kBlock);
    p->releaseResources();
}

void BM_PluginStatic24(benchmark::State& s)
{
    run(s, dsp::DesignMode::accurate, 0, 20.0f);
}
void BM_PluginGliding24Every2(benchmark::State& s)
{
    run(s, dsp::DesignMode::accurate, 2, 25.0f);
}
void BM_PluginGliding24Every1Glide20(benchmark::State& s)
{
    run(s, dsp::DesignMode::accurate, 1, 20.0f);
}
BENCHMARK(BM_PluginStatic24);
BENCHMARK(BM_PluginGliding24Every2);
BENCHMARK(BM_PluginGliding24Every1Glide20);
} // namespace

BENCHMARK_MAIN();
