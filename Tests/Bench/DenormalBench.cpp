// Denormals: after loud input, a feedback comb at its highest gain rings down through 60 s
// of silence, through the smallest numbers a double holds. The slowest second of those 60
// against the slowest of 60 s of loud input, measured in the same run (scripts/bench
// prints the ratio of medians; bar: silence <= 1.2x loud). Never a timed unit test.
#include "Chain.h"

#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <random>
#include <vector>

namespace
{
using namespace kerf::dsp;
constexpr double kRate = 48000.0;
constexpr int kBlock = 512;

/// A feedback comb at its highest gain (held at 0.995) with damping, and a few sections
/// (synthetic settings). Its short loop takes the ringing through the whole denormal range
/// (below 2.2e-308) within the 60 s of silence.
ChainSpec ringingChain()
{
    ChainSpec c;
    StageSpec comb;
    comb.type = StageType::comb;
    comb.comb.mode = CombMode::feedback;
    comb.comb.delayMs = 0.3; // 200 000 trips round the loop in 60 s: 0.995^200000 = 1e-435
    comb.comb.gain = 1.0;
    comb.comb.dampingHz = 6000.0;
    c.push(comb);
    for (int i = 0; i < 4; ++i)
    {
        StageSpec s;
        s.type = StageType::peaking;
        s.freqHz = 200.0 * (i + 1);
        s.gainDb = 3.0;
        s.q = 2.0;
        c.push(s);
    }
    return c;
}

/// One iteration: a second of loud noise (not timed), then 60 s of silence (the comb and
/// the sections ring down through the denormal range unless it is flushed), or, for the
/// comparison, 60 s more of loud noise. Reported: the slowest of those 60 seconds.
void run(benchmark::State& state, bool silent)
{
    ChainProcessor p;
    p.prepare(kRate, kBlock, 2);
    p.setChain(ringingChain());
    std::vector<double> l(kBlock), r(kBlock);
    // Loud noise made before timing (64 blocks, reused): a loud block costs a copy, as a
    // silent one costs a fill.
    constexpr int kNoiseBlocks = 64;
    std::vector<double> noise(2 * kNoiseBlocks * kBlock);
    std::mt19937 rng(3);
    std::uniform_real_distribution<double> u(-0.5, 0.5);
    for (auto& v : noise)
        v = u(rng);
    int next = 0;
    auto loud = [&]
    {
        const auto at = noise.begin() + 2 * (next++ % kNoiseBlocks) * kBlock;
        std::copy(at, at + kBlock, l.begin());
        std::copy(at + kBlock, at + 2 * kBlock, r.begin());
    };
    auto silence = [&]
    {
        std::fill(l.begin(), l.end(), 0.0);
        std::fill(r.begin(), r.end(), 0.0);
    };
    double* ch[2] = {l.data(), r.data()};
    const int second = static_cast<int>(kRate) / kBlock;
    for (auto _ : state)
    {
        state.PauseTiming();
        for (int b = 0; b < second; ++b)
        {
            loud();
            p.process(ch, 2, kBlock);
        }
        state.ResumeTiming();
        // The slowest second counts (the ringing crosses the denormal range in a few of the
        // 60 seconds; an average over all of them would hide a slow stretch).
        double slowest = 0.0;
        for (int sec = 0; sec < 60; ++sec)
        {
            const auto t0 = std::chrono::steady_clock::now();
            for (int b = 0; b < second; ++b)
            {
                if (silent)
                    silence();
                else
                    loud();
                p.process(ch, 2, kBlock);
                benchmark::DoNotOptimize(l[0]);
            }
            slowest = std::max(
                slowest,
                std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
        }
        state.SetIterationTime(slowest);
    }
    state.SetItemsProcessed(state.iterations() * second * kBlock);
}

void BM_RingingLoud(benchmark::State& s)
{
    run(s, false);
}
void BM_RingingSilence60s(benchmark::State& s)
{
    run(s, true);
}
BENCHMARK(BM_RingingLoud)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(BM_RingingSilence60s)->UseManualTime()->Unit(benchmark::kMillisecond);
} // namespace

BENCHMARK_MAIN();
