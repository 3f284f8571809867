#pragma once
// The soak run shared by the on-demand program (Tests/Bench/SoakRun.cpp, kerf_soak: one hour)
// and its short version in the test suite (Tests/Dsp/SoakTests.cpp): 48 kHz stereo through 24
// sections, a feedforward and a feedback comb and an echo canceller under random automation,
// in host-like blocks, with the output protection at the end. Counts samples that are not
// finite or beyond the ceiling, the processor's non-finite events, heap allocations while
// processing (AllocationHook.h), and times every block (steady_clock).
#include "AllocationHook.h"
#include "Chain.h"
#include "Limits.h"
#include "Stages/OutputProtection.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <memory>
#include <numbers>
#include <random>
#include <vector>

namespace kerf::soak
{
using namespace kerf::dsp;

struct Options
{
    double seconds = 60.0;
    double sampleRateHz = 48000.0;
    int blockSize = 512;
    unsigned seed = 20240611u;
    int automationEveryBlocks = 4; ///< new targets every that many blocks
    double ceilingDb = -1.0;       ///< output protection (the plugin's default)
    bool keepBlockTimes = true;
};

struct Result
{
    long long blocks = 0, samples = 0;
    long long nonFiniteOut = 0;    ///< chain output samples that were not finite
    long long overCeiling = 0;     ///< samples not finite or beyond the ceiling after protection
    long long protectionActed = 0; ///< samples the protection changed
    long long allocations = 0;     ///< heap allocations and frees inside setChain() / process()
    unsigned nonFiniteEvents = 0;  ///< ChainProcessor::nonFiniteEvents(): NaN or runaway
    double peakBeforeProtection = 0.0;
    long long chainChanges = 0, crossfadeChanges = 0, glideTimeChanges = 0;
    std::vector<double> blockSeconds; ///< processing time of every block (setChain + process)
};

/// Random automation of a 24-section + two combs + echo chain (synthetic settings).
class Automation
{
public:
    explicit Automation(unsigned seed) : rng(seed)
    {
        StageSpec echo;
        echo.type = StageType::echoCancel;
        echo.echo.numReflections = 2;
        echo.echo.reflections[0] = {7.3, 0.4};
        echo.echo.reflections[1] = {23.9, -0.25};
        chain.push(echo);
        for (int i = 0; i < kSections; ++i)
        {
            StageSpec s;
            s.type = StageType::peaking;
            s.freqHz = 30.0 * std::pow(600.0, i / double(kSections - 1));
            s.gainDb = (i % 2 ? -1.0 : 1.0) * (2.0 + i % 7);
            s.q = 0.7 + 0.25 * (i % 5);
            chain.push(s);
        }
        StageSpec ff;
        ff.type = StageType::comb;
        ff.comb.mode = CombMode::feedforward;
        ff.comb.delayMs = 2.7;
        ff.comb.gain = -0.6;
        ff.comb.mix = 0.7;
        chain.push(ff);
        StageSpec fb;
        fb.type = StageType::comb;
        fb.comb.mode = CombMode::feedback;
        fb.comb.pitchHz = 110.0;
        fb.comb.gain = 0.9;
        fb.comb.dampingHz = 4000.0;
        fb.comb.mix = 0.5;
        chain.push(fb);
    }

    static constexpr int kSections = 24;
    static constexpr int kEcho = 0, kFirstSection = 1, kFeedforward = 25, kFeedback = 26;

    /// New targets for a few random parameters; returns true when a change crossfades.
    bool step(Result& r)
    {
        bool crossfade = false;
        const int moves = 1 + static_cast<int>(uniform(0.0, 3.0));
        for (int m = 0; m < moves; ++m)
        {
            StageSpec& s = chain.stages[static_cast<std::size_t>(
                kFirstSection + static_cast<int>(uniform(0.0, kSections)))];
            const double what = uniform(0.0, 1.0);
            if (what < 0.75) // glide-sized moves of frequency, gain, Q, slope
            {
                s.freqHz = std::clamp(s.freqHz * std::pow(2.0, uniform(-1.0, 1.0)), 20.0, 20000.0);
                s.gainDb = std::clamp(s.gainDb + uniform(-6.0, 6.0), -18.0, 18.0);
                s.q = std::clamp(s.q * std::pow(2.0, uniform(-0.9, 0.9)), 0.1, 12.0);
                s.slope = uniform(0.3, 1.0);
            }
            else if (what < 0.9) // a jump anywhere: crossfades
            {
                s.freqHz = 20.0 * std::pow(1000.0, uniform(0.0, 1.0));
                s.gainDb = uniform(-18.0, 18.0);
                s.q = 0.1 * std::pow(100.0, uniform(0.0, 1.0));
                crossfade = true;
            }
            else if (what < 0.96) // a new type, order, channels or design
            {
                s.type = static_cast<StageType>(static_cast<int>(uniform(0.0, kNumSectionTypes)));
                s.order = 1 + static_cast<int>(uniform(0.0, 8.0));
                if (s.type == StageType::allPass)
                    s.order = std::min(s.order, 2);
                s.q = s.type == StageType::highPass || s.type == StageType::lowPass
                          ? 0.0
                          : std::clamp(s.q, 0.1, 12.0);
                s.alignment = uniform(0.0, 1.0) < 0.5 ? PassAlignment::butterworth
                                                      : PassAlignment::linkwitzRiley;
                s.channels = static_cast<ChannelMode>(static_cast<int>(uniform(0.0, 5.0)));
                s.design = uniform(0.0, 1.0) < 0.5 ? DesignMode::accurate : DesignMode::bilinear;
                crossfade = true;
            }
            else // on or off
            {
                s.enabled = !s.enabled;
                crossfade = true;
            }
        }
        const double other = uniform(0.0, 1.0);
        if (other < 0.04) // comb delays, gains, damping and mix
        {
            auto& ff = chain.stages[kFeedforward].comb;
            ff.delayMs = 0.2 * std::pow(250.0, uniform(0.0, 1.0));
            ff.gain = uniform(-1.0, 1.0);
            ff.mix = uniform(0.0, 1.0);
            auto& fb = chain.stages[kFeedback].comb;
            fb.pitchHz = uniform(0.0, 1.0) < 0.5 ? 40.0 * std::pow(25.0, uniform(0.0, 1.0)) : 0.0;
            fb.delayMs = 0.5 * std::pow(100.0, uniform(0.0, 1.0));
            fb.gain = uniform(-0.99, 0.99);
            fb.dampingHz = uniform(0.0, 1.0) < 0.3 ? 0.0 : 500.0 * std::pow(30.0, uniform(0, 1));
            fb.mix = uniform(0.0, 1.0);
            crossfade = true;
        }
        else if (other < 0.06) // echo model and method (gains kept to a stable inverse)
        {
            auto& e = chain.stages[kEcho].echo;
            e.numReflections = 1 + static_cast<int>(uniform(0.0, 4.0));
            double left = 0.9;
            for (int k = 0; k < e.numReflections; ++k)
            {
                const double g = uniform(-1.0, 1.0) * left / (e.numReflections - k);
                left -= std::abs(g);
                e.reflections[static_cast<std::size_t>(k)] = {
                    kMinEchoDelayMs * std::pow(kMaxEchoDelayMs / kMinEchoDelayMs, uniform(0, 1)),
                    g};
            }
            e.method = uniform(0.0, 1.0) < 0.7 ? EchoMethod::exact : EchoMethod::series;
            e.terms = 1 + static_cast<int>(uniform(0.0, kMaxEchoSeriesTerms));
            crossfade = true;
        }
        else if (other < 0.07)
            chain
                .stages[static_cast<std::size_t>(uniform(0.0, 1.0) < 0.5 ? kFeedforward
                                                                         : kFeedback)]
                .enabled ^= true;
        ++r.chainChanges;
        if (crossfade)
            ++r.crossfadeChanges;
        return crossfade;
    }

    /// Occasionally a new glide time (0..200 ms); negative when unchanged.
    double glideChange() { return uniform(0.0, 1.0) < 0.01 ? uniform(0.0, 200.0) : -1.0; }

    ChainSpec chain;

private:
    double uniform(double lo, double hi)
    {
        return std::uniform_real_distribution<double>(lo, hi)(rng);
    }
    std::mt19937_64 rng;
};

/// Synthetic stereo input: white noise at about -26 dBFS RMS plus two slowly drifting tones.
class Source
{
public:
    explicit Source(unsigned seed, double fs) : rng(seed + 1), fs(fs) {}
    void fill(float* l, float* r, int n)
    {
        std::uniform_real_distribution<float> u(-0.08f, 0.08f);
        for (int i = 0; i < n; ++i, ++t)
        {
            const double sec = static_cast<double>(t) / fs;
            const double f1 = 220.0 * std::pow(2.0, 2.0 * std::sin(0.05 * sec)); // drifts
            ph1 += 2.0 * std::numbers::pi * f1 / fs;
            ph2 += 2.0 * std::numbers::pi * 3150.0 / fs;
            ph1 = std::fmod(ph1, 2.0 * std::numbers::pi);
            ph2 = std::fmod(ph2, 2.0 * std::numbers::pi);
            l[i] = u(rng) + static_cast<float>(0.1 * std::sin(ph1));
            r[i] = u(rng) + static_cast<float>(0.05 * std::sin(ph2));
        }
    }

private:
    std::mt19937 rng;
    double fs;
    long long t = 0;
    double ph1 = 0.0, ph2 = 0.0;
};

/// Runs the soak; everything is allocated before the first block.
inline Result run(const Options& o)
{
    Result r;
    const long long total = static_cast<long long>(std::llround(o.seconds * o.sampleRateHz));
    const long long blocks = (total + o.blockSize - 1) / o.blockSize;
    if (o.keepBlockTimes)
        r.blockSeconds.reserve(static_cast<std::size_t>(blocks));
    auto owned = std::make_unique<ChainProcessor>(); // large: kept off the stack
    ChainProcessor& p = *owned;
    p.prepare(o.sampleRateHz, o.blockSize, 2);
    Automation automation(o.seed);
    p.setChain(automation.chain);
    OutputProtection protection;
    protection.setCeilingDb(o.ceilingDb);
    const float ceiling = static_cast<float>(std::pow(10.0, o.ceilingDb / 20.0));
    Source source(o.seed, o.sampleRateHz);
    std::vector<float> l(static_cast<std::size_t>(o.blockSize)),
        rr(static_cast<std::size_t>(o.blockSize));
    ChainSpec next = automation.chain;
    for (long long b = 0; b < blocks; ++b)
    {
        const int n = static_cast<int>(std::min<long long>(o.blockSize, total - r.samples));
        source.fill(l.data(), rr.data(), n);
        bool change = false;
        double glide = -1.0;
        if (b > 0 && b % o.automationEveryBlocks == 0)
        {
            automation.step(r);
            next = automation.chain; // a copy, as the plugin hands the processor its chain
            change = true;
            glide = automation.glideChange();
            if (glide >= 0.0)
                ++r.glideTimeChanges;
        }
        float* ch[2] = {l.data(), rr.data()};
        const auto t0 = std::chrono::steady_clock::now();
        {
            allochook::Scope counting;
            if (glide >= 0.0)
                p.setGlideMs(glide);
            if (change)
                p.setChain(next);
            p.process(ch, 2, n);
        }
        const auto t1 = std::chrono::steady_clock::now();
        if (o.keepBlockTimes)
            r.blockSeconds.push_back(std::chrono::duration<double>(t1 - t0).count());
        for (int c = 0; c < 2; ++c)
            for (int i = 0; i < n; ++i)
            {
                const double v = ch[c][i];
                if (!std::isfinite(v))
                    ++r.nonFiniteOut;
                else
                    r.peakBeforeProtection = std::max(r.peakBeforeProtection, std::abs(v));
            }
        r.protectionActed += protection.process(ch, 2, n);
        for (int c = 0; c < 2; ++c)
            for (int i = 0; i < n; ++i)
            {
                const float v = ch[c][i];
                if (!std::isfinite(v) || std::abs(v) > ceiling)
                    ++r.overCeiling;
            }
        r.samples += n;
        ++r.blocks;
    }
    r.allocations = allochook::count();
    r.nonFiniteEvents = p.nonFiniteEvents();
    return r;
}

} // namespace kerf::soak
