// Peaking section design against the Audio EQ Cookbook.
#include "Design/Matched.h"
#include "Design/Peaking.h"
#include "Response/SystemFunction.h"

#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>

using namespace kerf::dsp;

namespace
{
double magnitudeDb(const BiquadCoeffs& c, double freqHz, double fs)
{
    return 20.0 * std::log10(std::abs(evaluateSection(c, 2.0 * std::numbers::pi * freqHz / fs)));
}
} // namespace

TEST_CASE("peaking: Cookbook coefficients for fs 48 kHz, f0 1 kHz, Q 1, +6 dB", "[design]")
{
    // Source: Audio EQ Cookbook (R. Bristow-Johnson; W3C Working Group Note, 2021),
    // peakingEQ formulas, evaluated independently with /usr/bin/python3 (float64):
    //   A = 10^(6/40), w0 = 2 pi 1000/48000, alpha = sin(w0)/(2 Q), normalised by a0.
    const BiquadCoeffs c = designPeakingBilinear(1000.0, 6.0, 1.0, 48000.0);
    CHECK(c.b0 == Approx(1.043953086990335).epsilon(1e-12));
    CHECK(c.b1 == Approx(-1.8953207239365961).epsilon(1e-12));
    CHECK(c.b2 == Approx(0.8677222847598566).epsilon(1e-12));
    CHECK(c.a1 == Approx(-1.8953207239365961).epsilon(1e-12));
    CHECK(c.a2 == Approx(0.9116753717501915).epsilon(1e-12));
}

TEST_CASE("peaking: gain at f0, DC and Nyquist", "[design]")
{
    // Source: Audio EQ Cookbook (W3C Note, 2021): the bilinear peakingEQ has exactly
    // dBgain at f0 and 0 dB at DC and at Nyquist (H(z=1) = H(z=-1) = 1).
    for (double fs : {44100.0, 48000.0, 96000.0})
        for (double f0 : {50.0, 1000.0, 12000.0})
            for (double gain : {-18.0, -6.0, 6.0, 18.0})
                for (double q : {0.5, 1.0, 4.0})
                {
                    INFO("fs " << fs << " f0 " << f0 << " gain " << gain << " q " << q);
                    const auto c = designPeakingBilinear(f0, gain, q, fs);
                    CHECK(magnitudeDb(c, f0, fs) == Approx(gain).margin(1e-9));
                    const double dc = (c.b0 + c.b1 + c.b2) / (1.0 + c.a1 + c.a2);
                    const double nyq = (c.b0 - c.b1 + c.b2) / (1.0 - c.a1 + c.a2);
                    CHECK(dc == Approx(1.0).margin(1e-9));
                    CHECK(nyq == Approx(1.0).margin(1e-9));
                }
}

TEST_CASE("peaking: 0 dB gain is the identity", "[design]")
{
    // Source: Audio EQ Cookbook: with A = 1 numerator and denominator coincide.
    const auto c = designPeakingBilinear(2500.0, 0.0, 2.0, 48000.0);
    CHECK(c.b0 == Approx(1.0).margin(1e-15));
    CHECK(c.b1 == Approx(c.a1).margin(1e-15));
    CHECK(c.b2 == Approx(c.a2).margin(1e-15));
}

TEST_CASE("design frequencies clamp below Nyquist", "[design]")
{
    // Common practice: a chain written at 96 kHz must still load at 44.1 kHz.
    const auto c = designPeakingBilinear(30000.0, 6.0, 1.0, 44100.0);
    CHECK(std::isfinite(c.b0));
    CHECK(std::isfinite(c.a1));
    CHECK(1.0 + c.a1 + c.a2 > 0.0);
    CHECK(1.0 - c.a1 + c.a2 > 0.0);
    CHECK(std::abs(c.a2) < 1.0);
}

TEST_CASE("accurate designs: the fit's sine series agrees with the library's sine", "[design]")
{
    // Source: the C library's std::sin (within an ulp or so of the true value); the series
    // (Taylor to x^23) is used on 0..pi/2, where its truncation is below 1e-20.
    double worst = 0.0;
    for (int i = 0; i <= 100000; ++i)
    {
        const double x = 1.5707963267948966 * i / 100000.0;
        worst = std::max(worst, std::abs(matched::sinUpToHalfPi(x) - std::sin(x)));
    }
    INFO("largest difference " << worst);
    CHECK(worst <= 4.0e-16);
    CHECK(matched::sinUpToHalfPi(2.0) == std::sin(2.0)); // outside: the library's
}
