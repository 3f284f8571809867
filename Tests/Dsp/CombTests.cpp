// The comb stage: what it does equals its evaluated H; group delay; the feedback limit; a
// tuned resonance lands on its pitch.
#include "Chain.h"
#include "Stages/CombStage.h"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <numbers>
#include <random>
#include <vector>

using namespace kerf::dsp;

namespace
{
using cd = std::complex<double>;
constexpr double kPi = std::numbers::pi;

cd dftBin(const std::vector<double>& x, int k)
{
    cd acc = 0.0;
    const double n = static_cast<double>(x.size());
    for (std::size_t i = 0; i < x.size(); ++i)
        if (x[i] != 0.0)
            acc += x[i] * std::polar(1.0, -2.0 * kPi * k * static_cast<double>(i) / n);
    return acc;
}

std::vector<double> impulse(const CombSettings& s, double fs, int n)
{
    CombStage c;
    c.prepare(fs, 256, 1);
    c.setSettings(s);
    c.reset();
    std::vector<double> x(static_cast<std::size_t>(n), 0.0);
    x[0] = 1.0;
    for (int off = 0; off < n; off += 256)
    {
        double* ch[1] = {x.data() + off};
        c.process(ch, 1, std::min(256, n - off));
    }
    return x;
}
} // namespace

TEST_CASE("comb: impulse response FFT equals the evaluated H", "[comb]")
{
    // Source: definition of the system function, H(e^{jw}) = DTFT of h[n]; the IR is either
    // finite (feedforward) or decayed below 1e-12 within N samples (feedback, |g| < 1).
    const double fs = 48000.0;
    const int n = 1 << 16;
    std::vector<CombSettings> cases;
    CombSettings a;
    a.mode = CombMode::feedforward;
    a.delayMs = 1.3717;
    a.gain = -0.8;
    a.dampingHz = 3000.0;
    a.mix = 0.7;
    cases.push_back(a);
    CombSettings b = a;
    b.mode = CombMode::feedback;
    b.gain = 0.9;
    b.interpolation = DelayInterpolation::thiran;
    b.interpolationOrder = 2;
    cases.push_back(b);
    CombSettings c = b;
    c.interpolation = DelayInterpolation::lagrange;
    c.interpolationOrder = 5;
    c.pitchHz = 331.0;
    c.dampingHz = 5000.0;
    c.mix = 1.0;
    cases.push_back(c);
    CombSettings d = a;
    d.delayMs = 0.05; // shortest delay: 2.4 samples, interpolator near its edge
    d.interpolation = DelayInterpolation::thiran;
    d.interpolationOrder = 1;
    cases.push_back(d);
    for (std::size_t ci = 0; ci < cases.size(); ++ci)
    {
        const auto h = impulse(cases[ci], fs, n);
        double tail = 0.0;
        for (int i = n - 500; i < n; ++i)
            tail = std::max(tail, std::abs(h[static_cast<std::size_t>(i)]));
        INFO("case " << ci << " tail " << tail);
        REQUIRE(tail < 1e-12);
        double worst = 0.0;
        for (int k = 0; k < n / 2; k += 257)
        {
            const cd expect = combResponse(cases[ci], fs, 2.0 * kPi * k / n);
            worst = std::max(worst, std::abs(dftBin(h, k) - expect) / std::abs(expect));
        }
        CHECK(worst < 1e-6); // issue 4: relative 1e-6
    }
}

TEST_CASE("comb: group delay equals -d(phase)/d(omega)", "[comb]")
{
    // Source: definition of group delay; central difference of the phase.
    const double fs = 44100.0;
    for (CombMode m : {CombMode::feedforward, CombMode::feedback})
        for (DelayInterpolation k : {DelayInterpolation::lagrange, DelayInterpolation::thiran})
        {
            CombSettings s;
            s.mode = m;
            s.delayMs = 2.77;
            s.gain = 0.6;
            s.dampingHz = 4000.0;
            s.mix = 0.8;
            s.interpolation = k;
            for (double w = 0.013; w < 3.1; w += 0.091)
            {
                const double dw = 1e-6;
                const double dp =
                    std::arg(combResponse(s, fs, w + dw) / combResponse(s, fs, w - dw));
                CHECK(combGroupDelay(s, fs, w) ==
                      Approx(-dp / (2 * dw)).epsilon(1e-5).margin(1e-4));
            }
        }
}

TEST_CASE("comb: feedback gain is held below 1 and the loop stays stable", "[comb]")
{
    // Source: 1/(1 - g E(z)) with |E| <= 1 on the unit circle is stable for |g| < 1
    // (small-gain argument); the stage holds |g| <= kMaxFeedbackGain.
    const double fs = 48000.0;
    CombSettings s;
    s.mode = CombMode::feedback;
    s.gain = -1.7;
    s.delayMs = 0.9;
    CHECK(clampCombSettings(s, fs).gain == -kMaxFeedbackGain);
    CHECK(kMaxFeedbackGain < 1.0);
    const auto h = impulse(s, fs, 1 << 17);
    double late = 0.0;
    for (std::size_t i = h.size() - 1000; i < h.size(); ++i)
        late = std::max(late, std::abs(h[i]));
    // 0.995^(131072/43.2) ~ 3e-7: decaying, not growing
    CHECK(late < 1e-5);
}

TEST_CASE("comb: a tuned resonance peaks at its pitch, damping compensated", "[comb]")
{
    // Source: feedback comb 1/(1 - g z^-D) peaks where the loop phase is a whole number of
    // cycles, with height 1/(1 - g) for a lossless loop (J. O. Smith, "Physical Audio Signal
    // Processing", feedback comb filter; from memory).
    const double fs = 44100.0;
    CombSettings s;
    s.mode = CombMode::feedback;
    s.pitchHz = 220.0;
    s.gain = 0.9;
    s.interpolationOrder = 5;
    const double w0 = 2 * kPi * 220.0 / fs;
    CHECK(std::abs(combResponse(s, fs, w0)) == Approx(1.0 / (1.0 - 0.9)).epsilon(1e-4));
    s.dampingHz = 2000.0;
    // With damping the peak still sits at 220 Hz: |H| is largest there among nearby freqs.
    const double at = std::abs(combResponse(s, fs, w0));
    for (double df : {-2.0, -0.5, 0.5, 2.0})
        CHECK(std::abs(combResponse(s, fs, 2 * kPi * (220.0 + df) / fs)) < at);
}

// --- Delay sweeps (CombSettings::sweepDelay) ---

namespace
{
/// Runs a comb sample by sample on one channel, recording the line delay each sample used.
struct SweepRun
{
    std::vector<double> y, delay;
};

void stepComb(CombStage& c, const std::vector<double>& x, std::size_t from, std::size_t to,
              SweepRun& run)
{
    for (std::size_t i = from; i < to; ++i)
    {
        run.delay[i] = c.lineDelayNow();
        double v = x[i];
        double* ch[1] = {&v};
        c.process(ch, 1, 1);
        run.y[i] = v;
    }
}

CombSettings sweepingComb(double delayMs)
{
    CombSettings s;
    s.mode = CombMode::feedforward;
    s.delayMs = delayMs;
    s.gain = 0.5;
    s.mix = 1.0;
    s.sweepDelay = true; // Lagrange order 3 (the default)
    return s;
}
} // namespace

TEST_CASE("comb sweep: the output is the input plus the input delayed by the moving delay, and "
          "the delay follows the transition curve in log delay",
          "[comb]")
{
    const double fs = 48000.0, f = 300.0, a = 0.5;
    const std::size_t n = 12000, start = 4800;
    const int len = 960; // 20 ms
    std::vector<double> x(n);
    auto sine = [&](double t) { return a * std::sin(2.0 * kPi * f * t / fs); };
    for (std::size_t i = 0; i < n; ++i)
        x[i] = sine(static_cast<double>(i));
    CombStage c;
    c.prepare(fs, 512, 1);
    c.setSettings(sweepingComb(2.0));
    const CombSettings target = sweepingComb(9.0);
    REQUIRE(c.canSweepTo(target));
    SweepRun run{std::vector<double>(n), std::vector<double>(n)};
    stepComb(c, x, 0, start, run);
    c.sweepTo(target, len);
    CHECK(c.sweeping());
    stepComb(c, x, start, n, run);
    CHECK_FALSE(c.sweeping());

    // The path: log D = log D0 + (log D1 - log D0) s(k / len), s the C3 smoothstep
    // 35 t^4 - 84 t^5 + 70 t^6 - 20 t^7 (common practice), exact at both ends.
    const double d0 = 2.0e-3 * fs, d1 = 9.0e-3 * fs;
    double worstPath = 0.0;
    for (int k = 0; k <= len + 100; ++k)
    {
        const double t = std::min(1.0, k / static_cast<double>(len));
        const double s = t * t * t * t * (35.0 + t * (-84.0 + t * (70.0 - 20.0 * t)));
        const double expect = std::exp(std::log(d0) + (std::log(d1) - std::log(d0)) * s);
        worstPath = std::max(worstPath, std::abs(run.delay[start + k] - expect));
    }
    CHECK(worstPath < 1e-9);
    CHECK(run.delay[start - 1] == Approx(d0).epsilon(1e-12));
    CHECK(run.delay[n - 1] == Approx(d1).epsilon(1e-12));

    // y[n] = x[n] + g x(n - D[n]) with x the analytic sine. Third-order Lagrange
    // interpolation of a sinusoid errs by at most w^4 / 4! max|prod (d - k)| (the polynomial
    // interpolation remainder; Laakso et al. 1996): w = 0.039 rad, prod <= 0.5625 at the
    // centre, so 5.4e-8 of the amplitude; bar 1e-7 x a x g.
    double worst = 0.0;
    for (std::size_t i = 1000; i < n; ++i)
    {
        const double expect = x[i] + 0.5 * sine(static_cast<double>(i) - run.delay[i]);
        worst = std::max(worst, std::abs(run.y[i] - expect));
    }
    WARN("comb sweep 2 -> 9 ms in 20 ms: worst deviation from the moving delayed sine " << worst);
    CHECK(worst < 1e-7 * a * 0.5);
}

TEST_CASE("comb sweep: a new target during a sweep carries the delay's rate of change on", "[comb]")
{
    // A sweep restarted from rest would jump the delay's rate from about 0.5 samples per
    // sample (where the first sweep is taken over: D ln(4.5) s'(0.42) / 960 = 168 x 1.5 x 2.0
    // / 960) to 0, a second difference of ~0.5 (measured 0.49); carried on, the path's second
    // differences stay those of smooth 20 ms sweeps (below ~0.01 here: D |ln ratio| max|s''|
    // / len^2 = 432 x 1.5 x 7.5 / 960^2 = 5e-3 for the first move; computed).
    const double fs = 48000.0;
    const std::size_t n = 9000, start = 2000;
    std::vector<double> x(n, 0.0);
    CombStage c;
    c.prepare(fs, 512, 1);
    c.setSettings(sweepingComb(2.0));
    SweepRun run{std::vector<double>(n), std::vector<double>(n)};
    stepComb(c, x, 0, start, run);
    c.sweepTo(sweepingComb(9.0), 960);
    stepComb(c, x, start, start + 400, run);
    c.sweepTo(sweepingComb(4.0), 960); // turns back while moving fast
    stepComb(c, x, start + 400, start + 700, run);
    c.sweepTo(sweepingComb(30.0), 2400); // and again, with a longer glide
    stepComb(c, x, start + 700, n, run);
    double worst = 0.0;
    for (std::size_t i = 2; i < n; ++i)
        worst = std::max(worst, std::abs(run.delay[i] - 2.0 * run.delay[i - 1] + run.delay[i - 2]));
    WARN("comb sweeps taken over twice: largest second difference of the delay " << worst);
    CHECK(worst < 0.03);
    CHECK(run.delay[n - 1] == Approx(30.0e-3 * fs).epsilon(1e-12));
}

TEST_CASE("comb sweep: only odd-order Lagrange combs that ask for it sweep, and only their "
          "delay or pitch",
          "[comb]")
{
    CombStage c;
    c.prepare(48000.0, 512, 1);
    c.setSettings(sweepingComb(2.0));
    CHECK(c.canSweepTo(sweepingComb(7.0)));
    CombSettings pitched = sweepingComb(2.0);
    pitched.pitchHz = 180.0;
    CHECK(c.canSweepTo(pitched));
    CombSettings other = sweepingComb(7.0);
    other.gain = 0.4;
    CHECK_FALSE(c.canSweepTo(other));
    other = sweepingComb(7.0);
    other.sweepDelay = false;
    CHECK_FALSE(c.canSweepTo(other));
    other = sweepingComb(7.0);
    other.interpolation = DelayInterpolation::thiran;
    CHECK_FALSE(c.canSweepTo(other));
    CombSettings even = sweepingComb(2.0);
    even.interpolationOrder = 4; // even orders' tap sets do not meet where the line steps
    c.setSettings(even);
    even.delayMs = 7.0;
    CHECK_FALSE(c.canSweepTo(even));
}

TEST_CASE("comb sweep: a feedback comb at its gain limit stays bounded under random sweeps",
          "[comb]")
{
    // A loop 1/(1 - g E) with |g| < 1 is stable while still; under motion, boundedness is
    // checked: 20 s of noise through random pitch and delay sweeps (12 ms - 0.5 s, new
    // targets every 5 - 300 ms, often mid-sweep), gains +-0.995, damping on and off. The
    // still loop's largest gain is 1 / (1 - 0.995) = 200 (46 dB); the output must stay
    // finite and within that of the input's peak.
    const double fs = 48000.0;
    std::mt19937 rng(77);
    std::uniform_real_distribution<double> u(0.0, 1.0);
    for (double g : {0.995, -0.995})
        for (double damp : {0.0, 3000.0})
        {
            CombSettings s;
            s.mode = CombMode::feedback;
            s.gain = g;
            s.dampingHz = damp;
            s.sweepDelay = true;
            s.pitchHz = 220.0;
            CombStage c;
            c.prepare(fs, 512, 2);
            c.setSettings(s);
            std::vector<double> l(256), r(256);
            double peakIn = 0.0, peakOut = 0.0;
            bool finite = true;
            long long next = 0;
            for (long long t = 0; t < static_cast<long long>(20.0 * fs); t += 256)
            {
                if (t >= next)
                {
                    CombSettings to = s;
                    if (u(rng) < 0.5)
                    {
                        to.pitchHz = 0.0;
                        to.delayMs =
                            kCombMinDelayMs * std::pow(kCombMaxDelayMs / kCombMinDelayMs, u(rng));
                    }
                    else
                        to.pitchHz = 20.0 * std::pow(250.0, u(rng));
                    REQUIRE(c.canSweepTo(to));
                    c.sweepTo(to, static_cast<int>(fs * (0.012 + 0.488 * u(rng) * u(rng))));
                    next = t + static_cast<long long>(fs * (0.005 + 0.295 * u(rng)));
                }
                for (int i = 0; i < 256; ++i)
                {
                    l[static_cast<std::size_t>(i)] = 0.01 * (2.0 * u(rng) - 1.0);
                    r[static_cast<std::size_t>(i)] = 0.01 * (2.0 * u(rng) - 1.0);
                    peakIn = std::max(peakIn, std::abs(l[static_cast<std::size_t>(i)]));
                }
                double* ch[2] = {l.data(), r.data()};
                c.process(ch, 2, 256);
                for (int i = 0; i < 256; ++i)
                {
                    const double v = l[static_cast<std::size_t>(i)];
                    finite = finite && std::isfinite(v);
                    peakOut = std::max(peakOut, std::abs(v));
                }
            }
            INFO("gain " << g << ", damping " << damp);
            WARN("feedback comb, random sweeps, gain "
                 << g << " damping " << damp << ": output peak / input peak " << peakOut / peakIn);
            CHECK(finite);
            CHECK(peakOut <= 200.0 * peakIn);
        }
}

TEST_CASE("comb sweep: a chain whose comb asks for sweeps moves its delay in place, exactly as "
          "the comb alone sweeping over the glide time",
          "[comb][smoothing]")
{
    // No crossfade: the chain's output equals one comb instance sweeping from the update
    // point where the new chain arrives (blocks of 32 samples: that block's first sample)
    // over transitionSamples(glide time); with sweeps off, the same change crossfades and
    // the output differs.
    const double fs = 48000.0;
    const std::size_t n = 9600, at = 4800;
    std::vector<double> x(n);
    std::mt19937 rng(5);
    std::uniform_real_distribution<double> u(-0.3, 0.3);
    for (auto& v : x)
        v = u(rng);
    for (bool sweep : {true, false})
    {
        auto spec = [&](double ms)
        {
            ChainSpec c;
            StageSpec st;
            st.type = StageType::comb;
            st.comb = sweepingComb(ms);
            st.comb.sweepDelay = sweep;
            c.push(st);
            return c;
        };
        ChainProcessor p;
        p.prepare(fs, 32, 1);
        p.setGlideMs(20.0);
        p.setChain(spec(2.0));
        std::vector<double> y = x;
        bool moving = false;
        for (std::size_t off = 0; off < n; off += 32)
        {
            if (off == at)
                p.setChain(spec(9.0));
            double* ch[1] = {y.data() + off};
            p.process(ch, 1, 32);
            moving = moving || (off > at && p.isMoving());
        }
        CombStage c;
        c.prepare(fs, 512, 1);
        c.setSettings(spec(2.0).stages[0].comb);
        std::vector<double> z = x;
        double* zc[1] = {z.data()};
        c.process(zc, 1, static_cast<int>(at));
        c.sweepTo(spec(9.0).stages[0].comb, transitionSamples(20.0, fs));
        double* zr[1] = {z.data() + at};
        c.process(zr, 1, static_cast<int>(n - at));
        double worst = 0.0;
        for (std::size_t i = 0; i < n; ++i)
            worst = std::max(worst, std::abs(y[i] - z[i]));
        INFO("sweep " << sweep);
        CHECK(moving);
        if (sweep)
            CHECK(worst < 1e-12);
        else
            CHECK(worst > 1e-3);
    }
}
