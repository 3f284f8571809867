// The echo-cancellation stage: what it does equals its evaluated H; the exact inverse undoes
// the model; the series leaves gain^(terms+1); the Schur-Cohn test agrees with independent
// root counts; the backward (non-causal) inverse handles a reflection stronger than the
// direct sound.
#include "Stages/EchoCanceller.h"
#include "Stages/FractionalDelay.h"

#include "SpeechLikeSource.h"

#include <Eigen/Eigenvalues>
#include <catch2/catch.hpp>

#include <chrono>
#include <cmath>
#include <complex>
#include <cstdio>
#include <numbers>
#include <vector>

using namespace kerf::dsp;

namespace
{
using cd = std::complex<double>;
constexpr double kPi = std::numbers::pi;

/// Plain DFT at bin k of x (length N): sum x[n] e^{-j 2 pi k n / N} (numpy.fft.fft kernel).
cd dftBin(const std::vector<double>& x, int k)
{
    cd acc = 0.0;
    const double n = static_cast<double>(x.size());
    for (std::size_t i = 0; i < x.size(); ++i)
        if (x[i] != 0.0)
            acc += x[i] * std::polar(1.0, -2.0 * kPi * k * static_cast<double>(i) / n);
    return acc;
}

std::vector<double> run(EchoCanceller& c, std::vector<double> x, int block = 256)
{
    for (std::size_t off = 0; off < x.size(); off += static_cast<std::size_t>(block))
    {
        double* ch[1] = {x.data() + off};
        c.process(ch, 1, static_cast<int>(std::min<std::size_t>(block, x.size() - off)));
    }
    return x;
}

EchoCancelSettings model(std::initializer_list<EchoReflection> r, EchoMethod m, int terms = 4)
{
    EchoCancelSettings s;
    for (const auto& e : r)
        s.reflections[static_cast<std::size_t>(s.numReflections++)] = e;
    s.method = m;
    s.terms = terms;
    return s;
}

/// Winding number of P(e^{j w}) around 0 as w goes 0 -> 2 pi (argument principle): with
/// P(z) = z^-L Q(z), the count of roots of Q outside the unit circle.
int rootsOutside(const std::vector<double>& p, int points)
{
    double total = 0.0;
    cd prev = 0.0;
    for (int i = 0; i <= points; ++i)
    {
        const double w = 2.0 * kPi * i / points;
        cd v = 0.0;
        for (std::size_t k = 0; k < p.size(); ++k)
            if (p[k] != 0.0)
                v += p[k] * std::polar(1.0, -w * static_cast<double>(k));
        if (i > 0)
            total += std::arg(v / prev);
        prev = v;
    }
    // arg P = arg Q - L w; roots inside contribute +1 each to Q's winding (L in total if all in)
    const int windQ =
        static_cast<int>(std::lround(total / (2.0 * kPi))) + static_cast<int>(p.size()) - 1;
    return static_cast<int>(p.size()) - 1 - windQ;
}
} // namespace

TEST_CASE("Lagrange taps sum to 1 and their first moment equals the delay", "[echo]")
{
    // Source: Laakso et al. 1996, sec. on Lagrange interpolation: the maximally flat FIR
    // interpolator is exact for polynomials up to degree N, so sum h = 1 (degree 0) and
    // sum k h[k] = D (degree 1).
    for (int order : {1, 3, 5, 7})
        for (double d : {0.0, 0.3, 1.5, 2.71, 3.2})
        {
            double h[kMaxLagrangeOrder + 1];
            lagrangeTaps(d, order, h);
            double sum = 0.0, moment = 0.0;
            for (int k = 0; k <= order; ++k)
            {
                sum += h[k];
                moment += k * h[k];
            }
            CHECK(sum == Approx(1.0).margin(1e-12));
            CHECK(moment == Approx(d).margin(1e-12));
        }
}

TEST_CASE("Thiran all-pass: group delay at DC equals the delay, magnitude 1", "[echo]")
{
    // Source: Laakso et al. 1996 (Thiran 1971): maximally flat group delay D at omega = 0 and
    // an all-pass magnitude; first-order closed form a1 = -(D - 1)/(D + 1) (same paper).
    for (int order : {1, 2, 3, 5})
        for (double frac : {-0.4, 0.0, 0.25, 0.49})
        {
            const double d = order + frac;
            const ResponseValue h =
                fractionalDelayResponse(d, DelayInterpolation::thiran, order, 0, 1e-6);
            const DelaySplit s = splitDelay(d, DelayInterpolation::thiran, order, 0);
            CHECK(s.wholeSamples + s.interpolatorSamples == Approx(d).margin(1e-12));
            CHECK(h.groupDelaySamples() == Approx(d).margin(1e-6));
            for (double w : {0.3, 1.2, 2.9})
                CHECK(std::abs(
                          fractionalDelayResponse(d, DelayInterpolation::thiran, order, 0, w).h) ==
                      Approx(1.0).margin(1e-12));
        }
    double a[kMaxThiranOrder + 1];
    thiranCoefficients(0.7, 1, a);
    CHECK(a[1] == Approx(-(0.7 - 1.0) / (0.7 + 1.0)).margin(1e-15));
}

TEST_CASE("echo canceller: impulse response FFT equals the evaluated H (exact and series)",
          "[echo]")
{
    // Source: definition of the system function, H(e^{jw}) = DTFT of h[n]; for the exact
    // method h decays below 1e-12 within N samples; the series is an FIR shorter than N.
    const double fs = 48000.0;
    const int n = 1 << 16;
    for (EchoMethod m : {EchoMethod::exact, EchoMethod::series})
    {
        const EchoCancelSettings s =
            model({{2.37, 0.45}, {5.013, -0.3}, {9.9, 0.12}}, m, 5); // fractional delays
        EchoCanceller c;
        c.prepare(fs, 256, 1);
        c.setSettings(s);
        std::vector<double> x(static_cast<std::size_t>(n), 0.0);
        x[0] = 1.0;
        const std::vector<double> h = run(c, x);
        double tail = 0.0;
        for (int i = n - 1000; i < n; ++i)
            tail = std::max(tail, std::abs(h[static_cast<std::size_t>(i)]));
        INFO("tail " << tail);
        REQUIRE(tail < 1e-12);
        double worst = 0.0;
        for (int k = 0; k < n / 2; k += 331)
        {
            const double w = 2.0 * kPi * k / n;
            const cd expect = echoCancelResponse(s, fs, w);
            const cd got = dftBin(h, k);
            worst = std::max(worst, std::abs(got - expect) / std::abs(expect));
        }
        INFO("method " << (m == EchoMethod::exact ? "exact" : "series"));
        CHECK(worst < 1e-6); // relative error, issue 4 / the project's honesty check
    }
}

TEST_CASE("echo canceller: group delay equals -d(phase)/d(omega)", "[echo]")
{
    // Source: definition of group delay; central difference of the unwrapped phase.
    const double fs = 44100.0;
    for (EchoMethod m : {EchoMethod::exact, EchoMethod::series})
    {
        const EchoCancelSettings s = model({{3.3, 0.5}, {7.77, -0.25}}, m, 3);
        for (double w = 0.01; w < 3.1; w += 0.137)
        {
            const double dw = 1e-6;
            const double p1 =
                std::arg(echoCancelResponse(s, fs, w + dw) / echoCancelResponse(s, fs, w - dw));
            CHECK(echoCancelGroupDelay(s, fs, w) ==
                  Approx(-p1 / (2.0 * dw)).epsilon(1e-5).margin(1e-5));
        }
    }
}

TEST_CASE("exact inverse undoes the model; series leaves gain^(terms+1)", "[echo]")
{
    // Source: y = x + a x[n-D] (issue 4's model). Exact: z = y - a z[n-D] gives z = x.
    // Series with T terms: (1 + a z^-D) sum_{m=0}^{T} (-a z^-D)^m = 1 - (-a)^{T+1} z^-(T+1)D
    // (geometric series), so the residual is exactly -(-a)^{T+1} x[n-(T+1)D].
    const double fs = 48000.0;
    const int d = 240; // 5 ms, whole samples
    const double a = 0.6;
    kerf::test::Rng rng(42);
    std::printf("exact/series test seed 42\n");
    std::vector<double> x(20000), y(20000);
    for (auto& v : x)
        v = rng.normal();
    for (std::size_t i = 0; i < x.size(); ++i)
        y[i] = x[i] + (i >= d ? a * x[i - d] : 0.0);

    EchoCanceller c;
    c.prepare(fs, 256, 1);
    c.setSettings(model({{d * 1000.0 / fs, a}}, EchoMethod::exact));
    const auto z = run(c, y);
    double err = 0.0;
    for (std::size_t i = 0; i < x.size(); ++i)
        err = std::max(err, std::abs(z[i] - x[i]));
    CHECK(err < 1e-9);

    for (int terms : {1, 2, 4, 8})
    {
        c.reset();
        c.setSettings(model({{d * 1000.0 / fs, a}}, EchoMethod::series, terms));
        const auto s = run(c, y);
        const int lag = (terms + 1) * d;
        const double expect = -std::pow(-a, terms + 1);
        double worst = 0.0, echoP = 0.0, resP = 0.0;
        for (std::size_t i = 0; i < x.size(); ++i)
        {
            const double r = (i >= static_cast<std::size_t>(lag) ? expect * x[i - lag] : 0.0);
            worst = std::max(worst, std::abs(s[i] - x[i] - r));
            echoP += (y[i] - x[i]) * (y[i] - x[i]);
            resP += (s[i] - x[i]) * (s[i] - x[i]);
        }
        CHECK(worst < 1e-9);
        WARN("series terms " << terms << ": residual echo " << 10 * std::log10(resP / echoP)
                             << " dB re the echo (expected 20 log10(gain^terms) = "
                             << 20 * std::log10(std::pow(a, terms)) << " dB)");
    }
}

TEST_CASE("exact inverse of a fractional-delay echo: ERLE above 40 dB", "[echo]")
{
    // The echo is made by a 129-tap windowed sinc (Laakso et al. 1996), independent of the
    // stage's Lagrange interpolator; ERLE as ITU-T G.168 (clean signal known).
    const double fs = 44100.0;
    const auto x = kerf::test::speechLike(fs, 3.0, 7);
    const double dS = 12.7e-3 * fs; // 560.07 samples
    const auto dx = kerf::test::delayedBySinc(x, dS);
    std::vector<double> y(x.size());
    for (std::size_t i = 0; i < x.size(); ++i)
        y[i] = x[i] + 0.6 * dx[i];
    EchoCanceller c;
    c.prepare(fs, 512, 1);
    c.setSettings(model({{12.7, 0.6}}, EchoMethod::exact));
    const auto z = run(c, y, 512);
    double e = 0.0, r = 0.0;
    for (std::size_t i = 0; i < x.size(); ++i)
    {
        e += (y[i] - x[i]) * (y[i] - x[i]);
        r += (z[i] - x[i]) * (z[i] - x[i]);
    }
    const double erle = 10 * std::log10(e / r);
    WARN("exact inverse, true values, fractional delay: ERLE " << erle << " dB");
    CHECK(erle > 40.0);
}

TEST_CASE("Schur-Cohn agrees with known roots, the argument principle and Eigen", "[echo]")
{
    const double fs = 48000.0;
    // ECHO-NOTES.md (measured with NumPy): 1 + 0.55 z^-336 + 0.35 z^-912 - 0.2 z^-1584 has all
    // roots inside the unit circle (largest radius 0.9995) although sum |a| = 1.1.
    const auto notes =
        model({{336 / 48.0, 0.55}, {912 / 48.0, 0.35}, {1584 / 48.0, -0.2}}, EchoMethod::exact);
    const auto p = echoModelPolynomial(notes, fs);
    REQUIRE(p.size() == 1585);
    CHECK(p[336] == Approx(0.55).margin(1e-15));
    CHECK(checkEchoStability(notes, fs).stable);
    // Source: one reflection 1 + a z^-D has roots |z| = |a|^(1/D): stable iff |a| < 1.
    CHECK(checkEchoStability(model({{10.0, 0.99}}, EchoMethod::exact), fs).stable);
    const EchoStability bad = checkEchoStability(model({{10.0, -1.02}}, EchoMethod::exact), fs);
    CHECK_FALSE(bad.stable);
    CHECK(bad.message.find("series") != std::string::npos);
    CHECK(bad.message.find("non_causal") != std::string::npos);
    std::printf("unstable model message: %s\n", bad.message.c_str());

    // Source: argument principle (winding number of P(e^{jw})) on random sparse models with
    // fractional delays, seed printed. Degree up to ~480.
    kerf::test::Rng rng(2024);
    std::printf("Schur-Cohn random models seed 2024\n");
    int agree = 0, unstableSeen = 0;
    for (int t = 0; t < 40; ++t)
    {
        EchoCancelSettings s;
        s.numReflections = 1 + static_cast<int>(rng.uniform() * 4.0) % 4;
        for (int k = 0; k < s.numReflections; ++k)
            s.reflections[static_cast<std::size_t>(k)] = {rng.uniform(0.5, 10.0),
                                                          rng.uniform(-0.9, 0.9)};
        const auto q = echoModelPolynomial(s, fs);
        const bool sc = checkEchoStability(s, fs).stable;
        const bool wind = rootsOutside(q, 64 * static_cast<int>(q.size())) == 0;
        agree += sc == wind;
        unstableSeen += !wind;
        CHECK(sc == wind);
    }
    WARN("Schur-Cohn vs argument principle: " << agree << "/40 agree, " << unstableSeen
                                              << " unstable");

    // Source: Eigen's companion-matrix eigenvalues (degree ~40-45 at 48 kHz): largest root
    // radius < 1 iff Schur-Cohn says stable.
    for (int t = 0; t < 30; ++t)
    {
        EchoCancelSettings s;
        s.numReflections = 2;
        s.reflections[0] = {rng.uniform(0.5, 0.7), rng.uniform(-1.2, 1.2)};
        s.reflections[1] = {rng.uniform(0.5, 0.8), rng.uniform(-1.2, 1.2)};
        const auto q = echoModelPolynomial(s, fs);
        const int L = static_cast<int>(q.size()) - 1;
        Eigen::MatrixXd comp = Eigen::MatrixXd::Zero(L, L);
        for (int i = 0; i < L; ++i)
            comp(0, i) = -q[static_cast<std::size_t>(i + 1)] / q[0];
        for (int i = 1; i < L; ++i)
            comp(i, i - 1) = 1.0;
        const double radius = comp.eigenvalues().cwiseAbs().maxCoeff();
        if (std::abs(radius - 1.0) < 1e-6)
            continue; // too close to call for either method
        CHECK(checkEchoStability(s, fs).stable == (radius < 1.0));
    }

    // Cost at full degree: 250 ms at 48 kHz is a polynomial of degree ~12000; O(n^2).
    const auto big = model({{249.0, 0.5}, {100.3, 0.3}, {31.7, -0.2}}, EchoMethod::exact);
    const auto t0 = std::chrono::steady_clock::now();
    const bool st = checkEchoStability(big, fs).stable;
    const double ms =
        std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - t0).count();
    CHECK(st); // sum |a| < 1: stable (Rouche)
    WARN("Schur-Cohn at degree " << echoModelPolynomial(big, fs).size() - 1 << ": " << ms << " ms");
}

TEST_CASE("non-causal inverse removes a reflection stronger than the direct sound", "[echo]")
{
    // Source: y = x + a x[n-D] with |a| > 1 has roots |z| = |a|^(1/D) > 1: no stable causal
    // inverse, but the anti-causal one x[n] = (y[n+D] - x[n+D]) / a converges backwards.
    const double fs = 48000.0;
    // speech-like source (seed 77) followed by 0.5 s of silence: the backward recursion
    // starts from the silent end
    std::vector<double> x = kerf::test::speechLike(fs, 1.5, 77);
    x.resize(x.size() + 24000, 0.0);
    const double a = 1.25, dMs = 3.3; // 158.4 samples
    const auto dx = kerf::test::delayedBySinc(x, dMs * 1e-3 * fs);
    std::vector<double> y(x.size());
    for (std::size_t i = 0; i < x.size(); ++i)
        y[i] = x[i] + a * dx[i];
    const auto s = model({{dMs, a}}, EchoMethod::exact);
    CHECK_FALSE(checkEchoStability(s, fs).stable);
    std::vector<double> z = y;
    const NonCausalResult r = cancelEchoNonCausal(s, fs, z.data(), z.size());
    REQUIRE(r.ok);
    double e = 0.0, res = 0.0;
    for (std::size_t i = 0; i < x.size(); ++i)
    {
        e += (y[i] - x[i]) * (y[i] - x[i]);
        res += (z[i] - x[i]) * (z[i] - x[i]);
    }
    const double erle = 10 * std::log10(e / res);
    WARN("non-causal, gain 1.25: ERLE " << erle << " dB");
    CHECK(erle > 30.0);
    // A weak reflection is refused (its backward inverse is unstable).
    std::vector<double> w = y;
    CHECK_FALSE(
        cancelEchoNonCausal(model({{dMs, 0.5}}, EchoMethod::exact), fs, w.data(), w.size()).ok);
}
