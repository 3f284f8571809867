// Cost of the click-free layer: 24 stereo peaking sections in 512-sample blocks, static
// against every parameter gliding, measured in the same run (scripts/bench prints the
// ratio of medians; issue bar: gliding <= 1.5x static). Never a timed unit test.
#include "BenchChain.h"
#include "Chain.h"

#include <benchmark/benchmark.h>

#include <cmath>
#include <random>
#include <vector>

namespace
{
using namespace kerf::dsp;
constexpr double kRate = 48000.0;
constexpr int kBlock = 512;
constexpr int kSections = kerf::bench::kBenchSections;

/// The benchmarks' chain (BenchChain.h).
ChainSpec chain(DesignMode mode, int phase, int moving = kSections)
{
    return kerf::bench::benchChain(mode, phase, moving);
}

void fillNoise(std::vector<double>& l, std::vector<double>& r)
{
    std::mt19937 rng(7);
    std::uniform_real_distribution<double> u(-0.25, 0.25);
    for (auto& v : l)
        v = u(rng);
    for (auto& v : r)
        v = u(rng);
}

/// everyBlocks = 0: static; otherwise new targets for every parameter every that many
/// blocks (1: the host automates everything every block; 2: a new target about once per
/// glide time, every section always gliding).
void run(benchmark::State& state, DesignMode mode, int everyBlocks, double glideMs = 25.0,
         int moving = kSections)
{
    ChainProcessor p;
    p.prepare(kRate, kBlock, 2);
    // 25 ms (1200 samples) is longer than two blocks: a glide never ends before the next
    // target arrives, so every section glides all the time. Glides of 20 ms (the default)
    // are timed with new targets every block, which they never outlast.
    p.setGlideMs(glideMs);
    p.setChain(chain(mode, 0, moving));
    std::vector<double> l(kBlock), r(kBlock);
    fillNoise(l, r);
    double* ch[2] = {l.data(), r.data()};
    p.process(ch, 2, kBlock); // running: later chains glide
    // The targets alternate between two chains, built before timing starts: the benchmark
    // times processing, not the building of chain descriptions.
    const ChainSpec targets[2] = {chain(mode, 1, moving), chain(mode, 2, moving)};
    int block = 0, phase = 0;
    long long blocks = 0, movingBlocks = 0;
    for (auto _ : state)
    {
        if (everyBlocks > 0 && block++ % everyBlocks == 0)
            p.setChain(targets[phase++ % 2]); // the first differs from the start
        p.process(ch, 2, kBlock);
        ++blocks;
        movingBlocks += p.isMoving() ? 1 : 0;
        benchmark::DoNotOptimize(l[0]);
        if (std::abs(l[0]) > 10.0)
            fillNoise(l, r);
    }
    // The gliding cases must glide through (nearly) every block they time.
    if (everyBlocks > 0 && movingBlocks < blocks * 9 / 10)
        state.SkipWithError("the chain was not gliding in most blocks");
    state.SetItemsProcessed(state.iterations() * kBlock);
}

void BM_Static24Accurate(benchmark::State& s)
{
    run(s, DesignMode::accurate, 0);
}
void BM_Gliding24AccurateEvery2(benchmark::State& s)
{
    run(s, DesignMode::accurate, 2);
}
void BM_Gliding24AccurateEvery1(benchmark::State& s)
{
    run(s, DesignMode::accurate, 1);
}
void BM_Static24Bilinear(benchmark::State& s)
{
    run(s, DesignMode::bilinear, 0);
}
void BM_Gliding24BilinearEvery2(benchmark::State& s)
{
    run(s, DesignMode::bilinear, 2);
}
void BM_Gliding24BilinearEvery1(benchmark::State& s)
{
    run(s, DesignMode::bilinear, 1);
}
/// The default glide time (20 ms): knots every 32 samples (glideKnotSamples), not 64.
void BM_Gliding24AccurateEvery1Glide20(benchmark::State& s)
{
    run(s, DesignMode::accurate, 1, 20.0);
}
void BM_Gliding24BilinearEvery1Glide20(benchmark::State& s)
{
    run(s, DesignMode::bilinear, 1, 20.0);
}
/// The usual automation: one section of the 24 moves (new targets every 2 blocks), the
/// rest hold still.
void BM_OneOf24GlidingAccurateEvery2(benchmark::State& s)
{
    run(s, DesignMode::accurate, 2, 25.0, 1);
}
BENCHMARK(BM_Static24Accurate);
BENCHMARK(BM_Gliding24AccurateEvery2);
BENCHMARK(BM_Gliding24AccurateEvery1);
BENCHMARK(BM_Static24Bilinear);
BENCHMARK(BM_Gliding24BilinearEvery2);
BENCHMARK(BM_Gliding24BilinearEvery1);
BENCHMARK(BM_Gliding24AccurateEvery1Glide20);
BENCHMARK(BM_Gliding24BilinearEvery1Glide20);
void BM_OneOf24GlidingAccurateEvery1Glide20(benchmark::State& s)
{
    run(s, DesignMode::accurate, 1, 20.0, 1);
}
BENCHMARK(BM_OneOf24GlidingAccurateEvery2);
BENCHMARK(BM_OneOf24GlidingAccurateEvery1Glide20);
} // namespace

BENCHMARK_MAIN();
