// Numbers that are not numbers: NaN and infinity in the input, and a chain driven past
// what double precision holds, never reach the output.
#include "Chain.h"

#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <random>
#include <string>
#include <vector>

using namespace kerf::dsp;

namespace
{
constexpr double kFs = 48000.0;

/// Sections, a feedback comb near its limit and an echo canceller (synthetic settings).
ChainSpec busyChain()
{
    ChainSpec c;
    StageSpec s;
    s.type = StageType::peaking;
    s.freqHz = 300.0;
    s.gainDb = 12.0;
    s.q = 6.0;
    c.push(s);
    s.type = StageType::highPass;
    s.freqHz = 40.0;
    s.order = 4;
    s.q = 0.0;
    c.push(s);
    StageSpec comb;
    comb.type = StageType::comb;
    comb.comb.mode = CombMode::feedback;
    comb.comb.pitchHz = 220.0;
    comb.comb.gain = 0.99;
    c.push(comb);
    StageSpec echo;
    echo.type = StageType::echoCancel;
    echo.echo.numReflections = 1;
    echo.echo.reflections[0] = {6.0, 0.5};
    c.push(echo);
    return c;
}

std::vector<float> noise(int n, unsigned seed)
{
    std::mt19937 rng(seed);
    std::uniform_real_distribution<float> u(-0.2f, 0.2f);
    std::vector<float> x(static_cast<std::size_t>(n));
    for (auto& v : x)
        v = u(rng);
    return x;
}
} // namespace

TEST_CASE("robustness: NaN and infinity in the input are processed as silence", "[robustness]")
{
    // Common practice (a plugin must never pass NaN or infinity on): the input's
    // non-finite samples are treated as silence, so the output equals the output for the
    // same input with those samples set to zero, sample for sample, and is finite
    // throughout; the processor counts the blocks that held them.
    const int n = 48000, block = 512;
    const auto clean = noise(n, 17);
    auto dirty = clean;
    auto zeroed = clean;
    const float bad[] = {std::numeric_limits<float>::quiet_NaN(),
                         std::numeric_limits<float>::infinity(),
                         -std::numeric_limits<float>::infinity()};
    int blocksHit = 0;
    for (int b = 0; b < 3; ++b)
    {
        const int at = 10000 + 7000 * b; // in three different blocks
        for (int i = at; i < at + 37; ++i)
        {
            dirty[static_cast<std::size_t>(i)] = bad[b];
            zeroed[static_cast<std::size_t>(i)] = 0.0f;
        }
        ++blocksHit;
    }
    auto render = [&](std::vector<float> x, unsigned& events)
    {
        ChainProcessor p;
        p.prepare(kFs, block, 2);
        p.setChain(busyChain());
        std::vector<float> r(x);
        for (int s = 0; s < n; s += block)
        {
            float* ch[2] = {x.data() + s, r.data() + s};
            p.process(ch, 2, std::min(block, n - s));
        }
        events = p.nonFiniteEvents();
        return x;
    };
    unsigned dirtyEvents = 0, zeroedEvents = 0;
    const auto out = render(dirty, dirtyEvents);
    const auto expected = render(zeroed, zeroedEvents);
    bool finite = true, same = true;
    for (std::size_t i = 0; i < out.size(); ++i)
    {
        finite = finite && std::isfinite(out[i]);
        same = same && out[i] == expected[i];
    }
    CHECK(finite);
    CHECK(same);
    CHECK(dirtyEvents == static_cast<unsigned>(blocksHit));
    CHECK(zeroedEvents == 0u);

    // An empty chain passes audio through untouched, but not NaN.
    ChainProcessor empty;
    empty.prepare(kFs, block, 1);
    empty.setChain(ChainSpec{});
    std::vector<double> x = {0.5, std::nan(""), -0.25, HUGE_VAL};
    double* ch[1] = {x.data()};
    empty.process(ch, 1, 4);
    CHECK(x[0] == 0.5);
    CHECK(x[1] == 0.0);
    CHECK(x[2] == -0.25);
    CHECK(x[3] == 0.0);
    CHECK(empty.nonFiniteEvents() == 1u);
}

TEST_CASE("robustness: a chain driven past double precision recovers within one block",
          "[robustness]")
{
    // Common practice: an input so large (1e306 and 1.7e308, finite but far beyond any
    // signal) that the filters overflow or ring at absurd levels must not leave the output
    // infinite, nor the chain silent or ringing long after: the stage that ran away is
    // silenced and cleared at once, and after the burst the output is ordinary again.
    const int n = 24000, block = 480;
    auto x = noise(n, 23);
    std::vector<double> l(x.begin(), x.end());
    for (int i = 4800; i < 4900; ++i)
        l[static_cast<std::size_t>(i)] = i < 4850 ? 1e306 : 1.7e308;
    std::vector<double> r(l);
    ChainProcessor p;
    p.prepare(kFs, block, 2);
    p.setChain(busyChain());
    bool finite = true;
    for (int s = 0; s < n; s += block)
    {
        double* ch[2] = {l.data() + s, r.data() + s};
        p.process(ch, 2, block);
        for (int i = s; i < s + block; ++i)
            finite = finite && std::isfinite(l[static_cast<std::size_t>(i)]) &&
                     std::isfinite(r[static_cast<std::size_t>(i)]);
    }
    CHECK(finite);
    CHECK(p.nonFiniteEvents() >= 1u);
    // Long after the burst the output is ordinary again (the input's level, not silence,
    // not a runaway).
    double power = 0.0;
    for (int i = n - 4800; i < n; ++i)
        power += l[static_cast<std::size_t>(i)] * l[static_cast<std::size_t>(i)];
    const double rms = std::sqrt(power / 4800.0);
    CHECK(rms > 1e-3);
    CHECK(rms < 100.0);
}

TEST_CASE("robustness: any block sizes, changing every call, give the output of one block",
          "[robustness]")
{
    // Common practice (hosts send blocks of any size, and some change it every call):
    // a chain with sections on both channels, on one channel and on mid/side, a feedback
    // comb and an echo canceller, prepared for 8192-sample blocks, gives bit-identical
    // output whether it is fed one block of 40000 samples, blocks of 1, or blocks whose
    // size changes at random between 1 and 8192 on every call.
    ChainSpec c = busyChain();
    StageSpec s;
    s.type = StageType::lowShelf;
    s.freqHz = 200.0;
    s.gainDb = -6.0;
    s.channels = ChannelMode::left;
    c.push(s);
    s.type = StageType::highShelf;
    s.freqHz = 6000.0;
    s.gainDb = 4.0;
    s.channels = ChannelMode::side;
    c.push(s);
    const int n = 40000;
    const auto lf = noise(n, 31), rf = noise(n, 32);
    auto render = [&](auto nextSize)
    {
        ChainProcessor p;
        p.prepare(kFs, 8192, 2);
        p.setChain(c);
        std::vector<double> l(lf.begin(), lf.end()), r(rf.begin(), rf.end());
        for (int start = 0; start < n;)
        {
            const int len = std::min(nextSize(), n - start);
            double* ch[2] = {l.data() + start, r.data() + start};
            p.process(ch, 2, len);
            start += len;
        }
        return std::make_pair(l, r);
    };
    const auto whole = render([] { return 40000; });
    std::mt19937 rng(4242);
    std::uniform_int_distribution<int> size(1, 8192);
    for (const char* how : {"1", "random 1-8192", "8192"})
    {
        INFO("blocks: " << how);
        const auto pieces = std::string(how) == "1"      ? render([] { return 1; })
                            : std::string(how) == "8192" ? render([] { return 8192; })
                                                         : render([&] { return size(rng); });
        CHECK(pieces.first == whole.first);
        CHECK(pieces.second == whole.second);
    }
}
