// Benchmarks of the parametric sections against JUCE peers measured in the same run.
// Run on demand (scripts/bench), never as a timed unit test. Ratios are computed from the
// medians of repeated runs.
#include "Chain.h"
#include "Response/SystemFunction.h"

#include <benchmark/benchmark.h>
#include <juce_dsp/juce_dsp.h>

#include <cmath>
#include <random>
#include <vector>

namespace
{
constexpr double kRate = 48000.0;
constexpr int kBlock = 512;
constexpr int kSections = 24;

/// 24 peaking sections spread over the band (synthetic settings).
kerf::dsp::ChainSpec peakingChain(kerf::dsp::DesignMode mode)
{
    kerf::dsp::ChainSpec c;
    for (int i = 0; i < kSections; ++i)
    {
        kerf::dsp::StageSpec s;
        s.type = kerf::dsp::StageType::peaking;
        s.freqHz = 40.0 * std::pow(400.0, i / double(kSections - 1));
        s.gainDb = (i % 2 ? -1.0 : 1.0) * (3.0 + i % 5);
        s.q = 0.7 + 0.3 * (i % 4);
        s.design = mode;
        c.push(s);
    }
    return c;
}

void fillNoise(juce::AudioBuffer<float>& b)
{
    std::mt19937 rng(7);
    std::uniform_real_distribution<float> u(-0.25f, 0.25f);
    for (int ch = 0; ch < b.getNumChannels(); ++ch)
        for (int i = 0; i < b.getNumSamples(); ++i)
            b.setSample(ch, i, u(rng));
}

void kerfChain24(benchmark::State& state, int channels)
{
    kerf::dsp::ChainProcessor p;
    p.prepare(kRate, kBlock, channels);
    p.setChain(peakingChain(kerf::dsp::DesignMode::accurate));
    juce::AudioBuffer<float> buffer(channels, kBlock);
    fillNoise(buffer);
    for (auto _ : state)
    {
        p.process(buffer.getArrayOfWritePointers(), channels, kBlock);
        benchmark::DoNotOptimize(buffer.getReadPointer(0)[0]);
        // Keep the signal bounded and non-denormal between iterations.
        if (std::abs(buffer.getSample(0, 0)) > 10.0f)
            fillNoise(buffer);
    }
    state.SetItemsProcessed(state.iterations() * kBlock);
}

/// The plain SSE2 kernel, for machines without fused multiply-add.
void kerfChain24NoFma(benchmark::State& state, int channels)
{
    kerf::dsp::ChainProcessor::allowFusedMultiplyAdd(false);
    kerfChain24(state, channels);
    kerf::dsp::ChainProcessor::allowFusedMultiplyAdd(true);
}

void juceIirChain24(benchmark::State& state, int channels)
{
    using Filter = juce::dsp::ProcessorDuplicator<juce::dsp::IIR::Filter<float>,
                                                  juce::dsp::IIR::Coefficients<float>>;
    std::vector<std::unique_ptr<Filter>> filters;
    const auto chain = peakingChain(kerf::dsp::DesignMode::bilinear);
    juce::dsp::ProcessSpec spec{kRate, static_cast<juce::uint32>(kBlock),
                                static_cast<juce::uint32>(channels)};
    for (int i = 0; i < kSections; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        auto f = std::make_unique<Filter>();
        *f->state = *juce::dsp::IIR::Coefficients<float>::makePeakFilter(
            kRate, static_cast<float>(s.freqHz), static_cast<float>(s.q),
            juce::Decibels::decibelsToGain(static_cast<float>(s.gainDb)));
        f->prepare(spec);
        filters.push_back(std::move(f));
    }
    juce::AudioBuffer<float> buffer(channels, kBlock);
    fillNoise(buffer);
    juce::dsp::AudioBlock<float> block(buffer);
    for (auto _ : state)
    {
        juce::dsp::ProcessContextReplacing<float> ctx(block);
        for (auto& f : filters)
            f->process(ctx);
        benchmark::DoNotOptimize(buffer.getReadPointer(0)[0]);
        if (std::abs(buffer.getSample(0, 0)) > 10.0f)
            fillNoise(buffer);
    }
    state.SetItemsProcessed(state.iterations() * kBlock);
}

// Stereo, a mono track (a podcast voice) and a 5.1 bus, each beside its JUCE peer.
BENCHMARK_CAPTURE(kerfChain24, Stereo, 2);
BENCHMARK_CAPTURE(kerfChain24, Mono, 1);
BENCHMARK_CAPTURE(kerfChain24, Six, 6);
BENCHMARK_CAPTURE(kerfChain24NoFma, Stereo, 2);
BENCHMARK_CAPTURE(juceIirChain24, Stereo, 2);
BENCHMARK_CAPTURE(juceIirChain24, Mono, 1);
BENCHMARK_CAPTURE(juceIirChain24, Six, 6);

constexpr int kPoints = 2048;

std::vector<kerf::dsp::BiquadCoeffs> designed24()
{
    std::vector<kerf::dsp::BiquadCoeffs> out;
    const auto chain = peakingChain(kerf::dsp::DesignMode::accurate);
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto s = kerf::dsp::designStage(chain.stages[static_cast<std::size_t>(i)], kRate);
        for (int j = 0; j < s.count; ++j)
            out.push_back(s.sections[static_cast<std::size_t>(j)]);
    }
    return out;
}

void BM_KerfResponse2048(benchmark::State& state)
{
    const auto sections = designed24();
    const auto freqs = kerf::dsp::logSpacedFrequencies(10.0, 0.499 * kRate, kPoints);
    std::vector<double> db(kPoints);
    for (auto _ : state)
    {
        kerf::dsp::sectionsMagnitudeDb(sections.data(), static_cast<int>(sections.size()), kRate,
                                       freqs.data(), db.data(), kPoints);
        benchmark::DoNotOptimize(db.data());
    }
}
BENCHMARK(BM_KerfResponse2048);

void BM_JuceMagnitude2048(benchmark::State& state)
{
    // The same designed coefficients, as JUCE coefficient objects.
    std::vector<juce::dsp::IIR::Coefficients<float>::Ptr> coeffs;
    for (const auto& c : designed24())
        coeffs.push_back(new juce::dsp::IIR::Coefficients<float>(
            static_cast<float>(c.b0), static_cast<float>(c.b1), static_cast<float>(c.b2), 1.0f,
            static_cast<float>(c.a1), static_cast<float>(c.a2)));
    const auto freqs = kerf::dsp::logSpacedFrequencies(10.0, 0.499 * kRate, kPoints);
    std::vector<double> db(kPoints);
    for (auto _ : state)
    {
        for (int i = 0; i < kPoints; ++i)
        {
            double sum = 0.0;
            for (const auto& c : coeffs)
                sum += juce::Decibels::gainToDecibels(
                    c->getMagnitudeForFrequency(freqs[static_cast<std::size_t>(i)], kRate), -400.0);
            db[static_cast<std::size_t>(i)] = sum;
        }
        benchmark::DoNotOptimize(db.data());
    }
}
BENCHMARK(BM_JuceMagnitude2048);

} // namespace

BENCHMARK_MAIN();
