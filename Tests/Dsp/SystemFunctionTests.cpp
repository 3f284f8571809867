// The display never lies: what the processor does equals the evaluated system function.
#include "Chain.h"
#include "Design/Peaking.h"
#include "Response/SystemFunction.h"
#include "Stages/SvfSection.h"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <fstream>
#include <numbers>
#include <vector>

using namespace kerf::dsp;

namespace
{
using cd = std::complex<double>;

/// Iterative radix-2 FFT (Cooley-Tukey), forward, e^{-j...} kernel as numpy.fft.fft.
std::vector<cd> fft(std::vector<cd> a)
{
    const std::size_t n = a.size();
    for (std::size_t i = 1, j = 0; i < n; ++i)
    {
        std::size_t bit = n >> 1;
        for (; j & bit; bit >>= 1)
            j ^= bit;
        j ^= bit;
        if (i < j)
            std::swap(a[i], a[j]);
    }
    for (std::size_t len = 2; len <= n; len <<= 1)
    {
        const cd wl = std::polar(1.0, -2.0 * std::numbers::pi / static_cast<double>(len));
        for (std::size_t i = 0; i < n; i += len)
        {
            cd w = 1.0;
            for (std::size_t k = 0; k < len / 2; ++k)
            {
                const cd u = a[i + k], v = a[i + k + len / 2] * w;
                a[i + k] = u + v;
                a[i + k + len / 2] = u - v;
                w *= wl;
            }
        }
    }
    return a;
}

ChainSpec exampleChain()
{
    // Synthetic settings spanning narrow and wide, boost and cut, low and high.
    ChainSpec c;
    c.push({StageType::peaking, true, 35.0, 9.0, 0.7});
    c.push({StageType::peaking, true, 180.0, -12.0, 5.0});
    c.push({StageType::peaking, true, 630.0, -9.0, 8.0});
    c.push({StageType::peaking, false, 900.0, 18.0, 2.0}); // off: must not count
    c.push({StageType::peaking, true, 3400.0, 4.0, 0.9});
    c.push({StageType::peaking, true, 15000.0, -6.0, 1.5});
    return c;
}

void writeCsv(const std::string& path, const std::vector<double>& a, const std::vector<double>& b)
{
    std::ofstream f(path);
    f << "bin,expected,measured\n";
    for (std::size_t i = 0; i < a.size(); ++i)
        f << i << "," << a[i] << "," << b[i] << "\n";
}
} // namespace

TEST_CASE("impulse response FFT equals the evaluated H at every bin", "[response]")
{
    // Source: definition of the system function, H(e^{jw}) = DTFT of h[n]; with h decayed
    // far below 1e-12 by N samples, the N-point DFT samples it at w = 2 pi k / N.
    const double fs = 48000.0;
    const int n = 1 << 15;
    const ChainSpec chain = exampleChain();
    const auto ir = impulseResponse(chain, fs, n);
    std::vector<cd> x(ir.begin(), ir.end());
    const auto spectrum = fft(x);

    double worst = 0.0;
    std::vector<double> expectedMag, measuredMag;
    for (int k = 0; k <= n / 2; ++k)
    {
        const double f = fs * k / n;
        const cd h = evaluateChain(chain, fs, f);
        const double rel = std::abs(spectrum[static_cast<std::size_t>(k)] - h) / std::abs(h);
        worst = std::max(worst, rel);
        expectedMag.push_back(std::abs(h));
        measuredMag.push_back(std::abs(spectrum[static_cast<std::size_t>(k)]));
    }
    INFO("worst relative error " << worst);
    if (worst > 1e-6)
        writeCsv("ir_fft_vs_h_failure.csv", expectedMag, measuredMag);
    CHECK(worst <= 1e-6);
}

TEST_CASE("the float audio path matches the double path closely", "[response]")
{
    // Common practice: float I/O adds only rounding at the block edges (2^-24 relative).
    const double fs = 44100.0;
    const int n = 8192;
    const ChainSpec chain = exampleChain();
    const auto ref = impulseResponse(chain, fs, n);
    std::vector<float> x(static_cast<std::size_t>(n), 0.0f);
    x[0] = 1.0f;
    ChainProcessor p;
    p.prepare(fs, 512, 1);
    p.setChain(chain);
    float* ch[1] = {x.data()};
    for (int start = 0; start < n; start += 512)
    {
        float* block[1] = {x.data() + start};
        p.process(block, 1, 512);
    }
    double worst = 0.0;
    for (int i = 0; i < n; ++i)
        worst = std::max(
            worst, std::abs(x[static_cast<std::size_t>(i)] - ref[static_cast<std::size_t>(i)]));
    (void)ch;
    CHECK(worst < 1e-6);
}

TEST_CASE("SVF realisation equals the direct-form recursion of the same biquad", "[response]")
{
    // Source: the difference equation y[n] = b0 x[n] + b1 x[n-1] + b2 x[n-2]
    //   - a1 y[n-1] - a2 y[n-2] (direct form I), run here in long double as the reference.
    const double fs = 192000.0;
    for (auto [f0, g, q] : {std::tuple{20.0, 12.0, 0.7}, std::tuple{1000.0, -18.0, 10.0},
                            std::tuple{60000.0, 6.0, 1.0}})
    {
        const BiquadCoeffs c = designPeakingBilinear(f0, g, q, fs);
        const SvfCoeffs s = toSvf(c);
        SvfState st;
        long double x1 = 0, x2 = 0, y1 = 0, y2 = 0;
        double worst = 0.0;
        for (int i = 0; i < 20000; ++i)
        {
            const double x = (i == 0) ? 1.0 : ((i % 977) == 0 ? -0.5 : 0.0);
            const long double y =
                c.b0 * (long double)x + c.b1 * x1 + c.b2 * x2 - c.a1 * y1 - c.a2 * y2;
            x2 = x1;
            x1 = x;
            y2 = y1;
            y1 = y;
            const double ySvf = processSvf(s, st, x);
            worst = std::max(worst, std::abs(ySvf - static_cast<double>(y)));
        }
        INFO("f0 " << f0 << " worst " << worst);
        CHECK(worst < 1e-10);
    }
}

TEST_CASE("group delay equals minus the derivative of the phase", "[response]")
{
    // Source: definition tau(w) = -d arg H / dw, checked by central differences (h = 1e-6 rad).
    const double fs = 48000.0;
    const ChainSpec chain = exampleChain();
    const auto freqs = logSpacedFrequencies(20.0, 20000.0, 64);
    const auto points = chainResponse(chain, fs, freqs);
    for (std::size_t i = 0; i < freqs.size(); ++i)
    {
        const double w = 2.0 * std::numbers::pi * freqs[i] / fs, h = 1e-6;
        const double fPlus = (w + h) * fs / (2.0 * std::numbers::pi);
        const double fMinus = (w - h) * fs / (2.0 * std::numbers::pi);
        const double d =
            std::arg(evaluateChain(chain, fs, fPlus) / evaluateChain(chain, fs, fMinus));
        const double numeric = -d / (2.0 * h);
        INFO("f " << freqs[i]);
        CHECK(points[i].groupDelaySamples ==
              Approx(numeric).margin(1e-4 * (1.0 + std::abs(numeric))));
    }
}

TEST_CASE("chain response: magnitude and unwrapped phase agree with H", "[response]")
{
    // Source: definition of magnitude in dB (20 log10 |H|) and phase continuity.
    const double fs = 48000.0;
    const ChainSpec chain = exampleChain();
    const auto freqs = logSpacedFrequencies(10.0, 23990.0, 512);
    const auto points = chainResponse(chain, fs, freqs);
    REQUIRE(points.size() == freqs.size());
    for (std::size_t i = 0; i < points.size(); ++i)
    {
        const cd h = evaluateChain(chain, fs, freqs[i]);
        CHECK(points[i].magnitudeDb == Approx(20.0 * std::log10(std::abs(h))).margin(1e-9));
        const double wrappedDiff = std::remainder(
            points[i].phaseDeg * std::numbers::pi / 180.0 - std::arg(h), 2.0 * std::numbers::pi);
        CHECK(std::abs(wrappedDiff) < 1e-9);
        if (i > 0)
            CHECK(std::abs(points[i].phaseDeg - points[i - 1].phaseDeg) <= 180.0);
    }
}

TEST_CASE("disabling a stage leaves the other stages' memories untouched", "[response]")
{
    // Common practice: switching one band off must not disturb the others' filter state.
    // Reference: run stage 0 alone, feed its output to a processor holding stage 1 alone.
    const double fs = 48000.0;
    const int n = 256;
    const StageSpec s0{StageType::peaking, true, 200.0, 12.0, 4.0};
    const StageSpec s1{StageType::peaking, true, 2000.0, -9.0, 6.0};
    ChainSpec both, only0, only1, s0off;
    both.push(s0);
    both.push(s1);
    only0.push(s0);
    only1.push(s1);
    s0off = both;
    s0off.stages[0].enabled = false;

    ChainProcessor p, ref0, ref1;
    for (auto* q : {&p, &ref0, &ref1})
        q->prepare(fs, n, 1);
    p.setChain(both);
    ref0.setChain(only0);
    ref1.setChain(only1);

    std::vector<double> x(n, 0.0), r(n, 0.0);
    x[0] = r[0] = 1.0;
    double* cx[1] = {x.data()};
    double* cr[1] = {r.data()};
    p.process(cx, 1, n);
    ref0.process(cr, 1, n);
    ref1.process(cr, 1, n);
    for (int i = 0; i < n; ++i)
        REQUIRE(x[static_cast<std::size_t>(i)] ==
                Approx(r[static_cast<std::size_t>(i)]).margin(1e-15));

    p.setChain(s0off); // stage 0 off: stage 1 keeps ringing from where it was
    std::fill(x.begin(), x.end(), 0.0);
    std::fill(r.begin(), r.end(), 0.0);
    p.process(cx, 1, n);
    ref1.process(cr, 1, n);
    double energy = 0.0;
    for (int i = 0; i < n; ++i)
    {
        CHECK(x[static_cast<std::size_t>(i)] == r[static_cast<std::size_t>(i)]);
        energy += r[static_cast<std::size_t>(i)] * r[static_cast<std::size_t>(i)];
    }
    CHECK(energy > 1e-6); // the test means something: stage 1 was still ringing
}
