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
    // Stage 1 is switched off; it fades out (Smoothing/Transition.h), and from the end of
    // its fade on the output is stage 0 ringing on exactly as if stage 1 had never been.
    const double fs = 48000.0;
    const int n = 256;
    const StageSpec s0{StageType::peaking, true, 100.0, 12.0, 8.0};
    const StageSpec s1{StageType::peaking, true, 2000.0, -9.0, 6.0};
    ChainSpec both, only0, only1, s1off;
    both.push(s0);
    both.push(s1);
    only0.push(s0);
    only1.push(s1);
    s1off = both;
    s1off.stages[1].enabled = false;

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

    p.setChain(s1off);
    const int fade = transitionSamples(p.glideMs(), fs);
    const int m = fade + 2048;
    std::vector<double> y(static_cast<std::size_t>(m), 0.0), q(static_cast<std::size_t>(m), 0.0);
    double* cy[1] = {y.data()};
    double* cq[1] = {q.data()};
    p.process(cy, 1, m);
    ref0.process(cq, 1, m);
    double energy = 0.0;
    for (int i = fade + kUpdateIntervalSamples; i < m; ++i)
    {
        CHECK(y[static_cast<std::size_t>(i)] == q[static_cast<std::size_t>(i)]);
        energy += q[static_cast<std::size_t>(i)] * q[static_cast<std::size_t>(i)];
    }
    CHECK(energy > 1e-6); // the test means something: stage 0 was still ringing
}

namespace
{
/// Every section type once, with a mix of design modes (synthetic settings).
ChainSpec everyTypeChain()
{
    ChainSpec c;
    StageSpec s;
    s = {};
    s.type = StageType::highPass;
    s.freqHz = 60.0;
    s.order = 4;
    s.alignment = PassAlignment::linkwitzRiley;
    s.q = 0.0;
    c.push(s);
    s = {};
    s.type = StageType::lowShelf;
    s.freqHz = 150.0;
    s.gainDb = 4.0;
    s.slope = 0.8;
    c.push(s);
    s = {};
    s.type = StageType::peaking;
    s.freqHz = 900.0;
    s.gainDb = -7.0;
    s.q = 3.0;
    s.design = DesignMode::bilinear;
    c.push(s);
    s = {};
    s.type = StageType::notch;
    s.freqHz = 3000.0;
    s.q = 6.0;
    c.push(s);
    s = {};
    s.type = StageType::bandPass;
    s.freqHz = 2000.0;
    s.q = 0.3;
    c.push(s);
    s = {};
    s.type = StageType::allPass;
    s.freqHz = 500.0;
    s.order = 2;
    s.q = 0.8;
    c.push(s);
    s = {};
    s.type = StageType::tilt;
    s.freqHz = 1200.0;
    s.gainDb = 3.0;
    c.push(s);
    s = {};
    s.type = StageType::highShelf;
    s.freqHz = 9000.0;
    s.gainDb = -5.0;
    s.slope = 1.0;
    c.push(s);
    s = {};
    s.type = StageType::lowPass;
    s.freqHz = 16000.0;
    s.order = 3;
    s.q = 0.0;
    c.push(s);
    return c;
}

/// Largest |DFT(ir) - H| over every bin, as a fraction of the largest |H| (full scale).
double worstFullScaleError(const ChainSpec& chain, double fs, int n, ChannelView view)
{
    const auto ir = impulseResponse(chain, fs, n, view);
    const auto spectrum = fft(std::vector<cd>(ir.begin(), ir.end()));
    double worst = 0.0, peak = 0.0;
    for (int k = 0; k <= n / 2; ++k)
    {
        const cd h = evaluateChain(chain, fs, fs * k / n, view);
        worst = std::max(worst, std::abs(spectrum[static_cast<std::size_t>(k)] - h));
        peak = std::max(peak, std::abs(h));
    }
    return worst / peak;
}
} // namespace

TEST_CASE("every section type: impulse response FFT equals the evaluated H", "[response]")
{
    // Source: definition of the system function (H = DTFT of h). The chain has stop bands
    // (high-pass, notch), so the bar is 1e-6 of the chain's full scale at every bin.
    for (double fs : {44100.0, 48000.0, 96000.0})
    {
        const double worst = worstFullScaleError(everyTypeChain(), fs, 1 << 16, ChannelView::left);
        INFO("fs " << fs << " worst error / full scale " << worst);
        CHECK(worst <= 1e-6);
    }
}

TEST_CASE("both stereo kernels (with and without FMA) realise the designed H", "[response]")
{
    // Source: definition of the system function; the two kernels differ only in rounding,
    // so they agree to 1e-12 of full scale with each other.
    const ChainSpec c = everyTypeChain();
    ChainProcessor::allowFusedMultiplyAdd(false);
    const double plain = worstFullScaleError(c, 48000.0, 1 << 16, ChannelView::left);
    const auto irPlain = impulseResponse(c, 48000.0, 4096);
    ChainProcessor::allowFusedMultiplyAdd(true);
    const double fused = worstFullScaleError(c, 48000.0, 1 << 16, ChannelView::left);
    const auto irFused = impulseResponse(c, 48000.0, 4096);
    CHECK(plain <= 1e-6);
    CHECK(fused <= 1e-6);
    double worst = 0.0;
    for (std::size_t i = 0; i < irPlain.size(); ++i)
        worst = std::max(worst, std::abs(irPlain[i] - irFused[i]));
    CHECK(worst < 1e-12);
}

TEST_CASE("skewed stretch processing equals section-by-section processing", "[response]")
{
    // Common practice (reordering independent work must not change results): a stereo
    // chain processed in blocks of every length from 1 to 70 equals one long block.
    const ChainSpec c = everyTypeChain();
    std::vector<double> l0(3000), r0(3000);
    for (std::size_t i = 0; i < l0.size(); ++i)
    {
        l0[i] = std::sin(0.013 * static_cast<double>(i * i % 977));
        r0[i] = std::cos(0.071 * static_cast<double>(i % 313));
    }
    ChainProcessor whole;
    whole.prepare(48000.0, 4096, 2);
    whole.setChain(c);
    auto l1 = l0, r1 = r0;
    double* ch1[2] = {l1.data(), r1.data()};
    whole.process(ch1, 2, 3000);
    for (int block : {1, 2, 3, 7, 64, 70})
    {
        ChainProcessor pieces;
        pieces.prepare(48000.0, block, 2);
        pieces.setChain(c);
        auto l2 = l0, r2 = r0;
        for (int start = 0; start < 3000; start += block)
        {
            double* ch2[2] = {l2.data() + start, r2.data() + start};
            pieces.process(ch2, 2, std::min(block, 3000 - start));
        }
        INFO("block " << block);
        for (std::size_t i = 0; i < l0.size(); ++i)
        {
            REQUIRE(l2[i] == l1[i]);
            REQUIRE(r2[i] == r1[i]);
        }
    }
}

TEST_CASE("mono and multichannel chains give what a stereo run gives, channel by channel, bit "
          "for bit",
          "[response]")
{
    // Common practice (a channel's result must not depend on its neighbours): channels run
    // two by two through the same skewed pair kernel as stereo, a last odd channel with
    // silence in the other lane, so channel c of a 1-, 3- or 6-channel run fed alternately
    // with signals x and y equals the left (c even) or right (c odd) channel of a stereo run
    // fed x and y, exactly: holding still and gliding (the chain changes half-way), with and
    // without FMA.
    const ChainSpec a = everyTypeChain();
    ChainSpec b = a;
    for (int i = 0; i < b.numStages; ++i)
    {
        auto& st = b.stages[static_cast<std::size_t>(i)];
        st.freqHz *= 1.3;
        st.gainDb *= 0.5;
    }
    std::vector<double> x(6000), other(6000);
    for (std::size_t i = 0; i < x.size(); ++i)
    {
        x[i] = std::sin(0.013 * static_cast<double>(i * i % 977));
        other[i] = std::cos(0.071 * static_cast<double>(i % 313));
    }
    // Runs a processor prepared for nch channels; channel c gets x (c even) or other.
    const auto run = [&](int nch, bool& glided)
    {
        ChainProcessor p;
        p.prepare(48000.0, 256, nch);
        std::vector<std::vector<double>> ch(static_cast<std::size_t>(nch));
        for (int c = 0; c < nch; ++c)
            ch[static_cast<std::size_t>(c)] = c % 2 ? other : x;
        glided = false;
        for (int start = 0; start < 6000; start += 256)
        {
            if (start == 0 || start == 3072)
                p.setChain(start == 0 ? a : b);
            const int len = std::min(256, 6000 - start);
            double* ptr[8];
            for (int c = 0; c < nch; ++c)
                ptr[c] = ch[static_cast<std::size_t>(c)].data() + start;
            p.process(ptr, nch, len);
            glided = glided || (start >= 3072 && p.isMoving());
        }
        return ch;
    };
    for (bool fma : {true, false})
    {
        ChainProcessor::allowFusedMultiplyAdd(fma);
        bool glided = false;
        const auto stereo = run(2, glided);
        CHECK(glided);
        bool moved = false;
        for (std::size_t i = 0; i < x.size(); ++i)
            moved = moved || stereo[0][i] != x[i];
        CHECK(moved);
        for (int nch : {1, 3, 6})
        {
            const auto multi = run(nch, glided);
            INFO("fma " << fma << ", " << nch << " channels");
            CHECK(glided);
            for (int c = 0; c < nch; ++c)
                for (std::size_t i = 0; i < x.size(); ++i)
                    REQUIRE(multi[static_cast<std::size_t>(c)][i] ==
                            stereo[static_cast<std::size_t>(c % 2)][i]);
        }
    }
    ChainProcessor::allowFusedMultiplyAdd(true);
}

TEST_CASE("channel modes: each view's impulse response equals its evaluated path", "[response]")
{
    // Source: definition of the mid/side transform (M = (L+R)/2, S = (L-R)/2, L = M+S,
    // R = M-S) and of the system function; bar 1e-6 of full scale at every bin.
    ChainSpec c = everyTypeChain();
    c.stages[1].channels = ChannelMode::left;
    c.stages[2].channels = ChannelMode::mid;
    c.stages[3].channels = ChannelMode::side;
    c.stages[6].channels = ChannelMode::right;
    for (auto view : {ChannelView::left, ChannelView::right, ChannelView::mid, ChannelView::side})
    {
        const double worst = worstFullScaleError(c, 48000.0, 1 << 16, view);
        INFO("view " << static_cast<int>(view) << " worst " << worst);
        CHECK(worst <= 1e-6);
    }
}

TEST_CASE("mid/side: encode and decode are exact, and a mid stage leaves the side alone",
          "[response]")
{
    // Source: mid/side identities above; a 0 dB peaking section is the identity (Cookbook).
    ChainSpec flat;
    StageSpec s;
    s.channels = ChannelMode::mid;
    s.gainDb = 0.0;
    flat.push(s);
    s.channels = ChannelMode::side;
    flat.push(s);
    ChainProcessor p;
    p.prepare(48000.0, 256, 2);
    p.setChain(flat);
    std::vector<double> l(256), r(256);
    for (int i = 0; i < 256; ++i)
    {
        l[static_cast<std::size_t>(i)] = std::sin(0.1 * i) * 0.7;
        r[static_cast<std::size_t>(i)] = std::cos(0.37 * i) * 0.3;
    }
    auto l0 = l, r0 = r;
    double* ch[2] = {l.data(), r.data()};
    p.process(ch, 2, 256);
    for (std::size_t i = 0; i < l.size(); ++i)
    {
        CHECK(l[i] == Approx(l0[i]).margin(1e-15));
        CHECK(r[i] == Approx(r0[i]).margin(1e-15));
    }

    ChainSpec boostMid;
    s.channels = ChannelMode::mid;
    s.gainDb = 12.0;
    s.freqHz = 1000.0;
    boostMid.push(s);
    p.reset();
    p.setChain(boostMid);
    std::vector<double> a(512, 0.0), b(512, 0.0);
    for (int i = 0; i < 512; ++i) // pure side: L = -R
    {
        a[static_cast<std::size_t>(i)] = std::sin(0.05 * i);
        b[static_cast<std::size_t>(i)] = -a[static_cast<std::size_t>(i)];
    }
    const auto a0 = a;
    double* ab[2] = {a.data(), b.data()};
    p.process(ab, 2, 512);
    for (std::size_t i = 0; i < a.size(); ++i)
    {
        CHECK(a[i] == Approx(a0[i]).margin(1e-12));
        CHECK(b[i] == Approx(-a0[i]).margin(1e-12));
    }
}

TEST_CASE("group delay is exact through mid/side paths too", "[response]")
{
    // Source: definition tau = -d arg H / dw, central differences (h = 1e-6 rad).
    ChainSpec c = everyTypeChain();
    c.stages[2].channels = ChannelMode::mid;
    c.stages[5].channels = ChannelMode::side;
    const double fs = 48000.0;
    const auto freqs = logSpacedFrequencies(100.0, 20000.0, 40);
    for (auto view : {ChannelView::left, ChannelView::mid})
    {
        const auto points = chainResponse(c, fs, freqs, view);
        for (std::size_t i = 0; i < freqs.size(); ++i)
        {
            const double w = 2.0 * std::numbers::pi * freqs[i] / fs, h = 1e-6;
            const double fp = (w + h) * fs / (2.0 * std::numbers::pi);
            const double fm = (w - h) * fs / (2.0 * std::numbers::pi);
            const double numeric =
                -std::arg(evaluateChain(c, fs, fp, view) / evaluateChain(c, fs, fm, view)) /
                (2.0 * h);
            INFO("view " << static_cast<int>(view) << " f " << freqs[i]);
            CHECK(points[i].groupDelaySamples ==
                  Approx(numeric).margin(1e-4 * (1.0 + std::abs(numeric))));
        }
    }
}

TEST_CASE("fast magnitude path equals the complex evaluation", "[response]")
{
    // Source: |H|^2 in phi = sin^2(w/2) (M. Vicanek, "Matched Second Order Digital
    // Filters", 2016) is algebraically |H(e^jw)|^2; checked to 1e-6 dB above -120 dB.
    const double fs = 48000.0;
    ChainSpec c = everyTypeChain();
    const auto freqs = logSpacedFrequencies(10.0, 23900.0, 2048);
    std::vector<double> fast(freqs.size());
    chainMagnitudeDb(c, fs, freqs.data(), fast.data(), static_cast<int>(freqs.size()));
    const auto exact = chainResponse(c, fs, freqs);
    for (std::size_t i = 0; i < freqs.size(); ++i)
        if (exact[i].magnitudeDb > -120.0)
            CHECK(fast[i] == Approx(exact[i].magnitudeDb).margin(1e-6));
}

TEST_CASE("fast magnitude path carries comb stages", "[response]")
{
    // Source: a feedforward comb y[n] = x[n] + g x[n - D] has |H| = |1 + g e^{-j w D}|
    // (difference equation's transfer function); D = 240 whole samples, no damping, so its
    // Lagrange interpolator is an exact delay. The section alone is flat (0 dB gain).
    const double fs = 48000.0;
    ChainSpec c;
    StageSpec flat;
    flat.gainDb = 0.0;
    c.push(flat);
    StageSpec comb;
    comb.type = StageType::comb;
    comb.comb.mode = CombMode::feedforward;
    comb.comb.delayMs = 5.0;
    comb.comb.gain = 0.7;
    c.push(comb);
    const auto freqs = logSpacedFrequencies(20.0, 20000.0, 997);
    std::vector<double> fast(freqs.size());
    chainMagnitudeDb(c, fs, freqs.data(), fast.data(), static_cast<int>(freqs.size()));
    for (std::size_t i = 0; i < freqs.size(); ++i)
    {
        const double w = 2.0 * std::numbers::pi * freqs[i] / fs;
        const double expected =
            20.0 * std::log10(std::abs(1.0 + 0.7 * std::polar(1.0, -w * 240.0)));
        CHECK(fast[i] == Approx(expected).margin(1e-6));
    }
}

TEST_CASE("a 20 Hz high-pass at 192 kHz measures within 0.05 dB of its design at 40 Hz",
          "[response]")
{
    // Issue bar (the hard case for precision): steady-state sine through the float audio
    // path, amplitude by least-squares fit of sin/cos at 40 Hz, against |H| designed.
    const double fs = 192000.0;
    ChainSpec c;
    StageSpec s;
    s.type = StageType::highPass;
    s.freqHz = 20.0;
    s.order = 2;
    s.q = 0.0;
    c.push(s);
    const int n = static_cast<int>(fs * 4.0);
    std::vector<float> x(static_cast<std::size_t>(n));
    const double w = 2.0 * std::numbers::pi * 40.0 / fs;
    for (int i = 0; i < n; ++i)
        x[static_cast<std::size_t>(i)] = static_cast<float>(0.5 * std::sin(w * i));
    ChainProcessor p;
    p.prepare(fs, 512, 1);
    p.setChain(c);
    for (int start = 0; start < n; start += 512)
    {
        float* ch[1] = {x.data() + start};
        p.process(ch, 1, std::min(512, n - start));
    }
    // Fit over the last two seconds (transient long gone): y ~ a sin + b cos.
    double ss = 0, sc = 0, cc = 0, ys = 0, yc = 0;
    for (int i = n / 2; i < n; ++i)
    {
        const double si = std::sin(w * i), co = std::cos(w * i), y = x[static_cast<std::size_t>(i)];
        ss += si * si;
        sc += si * co;
        cc += co * co;
        ys += y * si;
        yc += y * co;
    }
    const double det = ss * cc - sc * sc;
    const double a = (ys * cc - yc * sc) / det, b = (yc * ss - ys * sc) / det;
    const double measuredDb = 20.0 * std::log10(std::hypot(a, b) / 0.5);
    const double designedDb = 20.0 * std::log10(std::abs(evaluateChain(c, fs, 40.0)));
    INFO("measured " << measuredDb << " dB, designed " << designedDb << " dB");
    CHECK(std::abs(measuredDb - designedDb) <= 0.05);
}

TEST_CASE("poles and zeros: roots reproduce each stage's H", "[response]")
{
    // Source: factored form H = k prod(1 - z_i/z)/prod(1 - p_i/z) (scipy.signal.tf2zpk
    // convention), evaluated against the sections at 50 frequencies to 1e-9 relative.
    const double fs = 48000.0;
    const ChainSpec c = everyTypeChain();
    for (int i = 0; i < c.numStages; ++i)
    {
        const auto pz = stagePolesZeros(c.stages[static_cast<std::size_t>(i)], fs);
        ChainSpec one;
        one.push(c.stages[static_cast<std::size_t>(i)]);
        for (double f : logSpacedFrequencies(20.0, 20000.0, 50))
        {
            const cd zinv = std::polar(1.0, -2.0 * std::numbers::pi * f / fs);
            cd h = pz.gain;
            for (const auto& z : pz.zeros)
                h *= 1.0 - z * zinv;
            for (const auto& p : pz.poles)
                h /= 1.0 - p * zinv;
            const cd ref = evaluateChain(one, fs, f);
            INFO("stage " << i << " f " << f);
            CHECK(std::abs(h - ref) <= 1e-9 * std::max(std::abs(ref), 1e-3));
        }
        for (const auto& p : pz.poles)
            CHECK(std::abs(p) < 1.0); // every designed section is stable
    }
}

TEST_CASE("echo-cancellation stage in a chain: impulse response FFT equals H", "[response][echo]")
{
    // Source: definition of the system function; the exact inverse 1/P(z) of the model
    // P = 1 + sum a_k z^-D_k, and the series FIR, realised by the stage (EchoCanceller.h).
    // Bar: 1e-6 of full scale at every bin.
    for (auto method : {EchoMethod::exact, EchoMethod::series})
    {
        ChainSpec c;
        StageSpec echo;
        echo.type = StageType::echoCancel;
        echo.echo.numReflections = 2;
        echo.echo.reflections[0] = {12.7, 0.5};
        echo.echo.reflections[1] = {31.3, -0.2};
        echo.echo.method = method;
        echo.echo.terms = 5;
        c.push(echo);
        StageSpec peak;
        peak.freqHz = 2000.0;
        peak.gainDb = 4.0;
        c.push(peak);
        const double worst = worstFullScaleError(c, 48000.0, 1 << 16, ChannelView::left);
        INFO("method " << static_cast<int>(method) << " worst " << worst);
        CHECK(worst <= 1e-6);
    }
}

TEST_CASE("echo-cancellation stage undoes its model in the chain", "[response][echo]")
{
    // Source: the model y = x + a x[n - D] (issue definition) and its exact inverse: the
    // cascade model -> canceller is the identity, so an impulse comes back as an impulse.
    ChainSpec c;
    StageSpec echo;
    echo.type = StageType::echoCancel;
    echo.echo.numReflections = 1;
    echo.echo.reflections[0] = {10.0, 0.6}; // 480 samples at 48 kHz: a whole-sample delay
    c.push(echo);
    std::vector<double> l(8192, 0.0), r(8192, 0.0);
    l[0] = r[0] = 1.0;
    l[480] = r[480] = 0.6; // the model applied to an impulse
    ChainProcessor p;
    p.prepare(48000.0, 512, 2);
    p.setChain(c);
    for (int start = 0; start < 8192; start += 512)
    {
        double* ch[2] = {l.data() + start, r.data() + start};
        p.process(ch, 2, 512);
    }
    CHECK(l[0] == Approx(1.0).margin(1e-9));
    double residual = 0.0;
    for (std::size_t i = 1; i < l.size(); ++i)
        residual = std::max({residual, std::abs(l[i]), std::abs(r[i])});
    INFO("largest residual " << residual);
    CHECK(residual < 1e-9);
}

TEST_CASE("comb stages in a chain: impulse response FFT equals H", "[response][comb]")
{
    // Source: definition of the system function; the comb's H = (1 - mix) + mix W with
    // W = 1 + g E (feedforward) or 1/(1 - g E) (feedback), E = delay x interpolator x
    // damping (CombStage.h). Bar: 1e-6 of full scale at every bin.
    ChainSpec c;
    StageSpec ff;
    ff.type = StageType::comb;
    ff.comb.mode = CombMode::feedforward;
    ff.comb.delayMs = 3.37;
    ff.comb.gain = -0.7;
    ff.comb.mix = 0.8;
    c.push(ff);
    StageSpec fb;
    fb.type = StageType::comb;
    fb.comb.mode = CombMode::feedback;
    fb.comb.pitchHz = 196.0;
    fb.comb.gain = 0.6;
    fb.comb.dampingHz = 5000.0;
    c.push(fb);
    StageSpec peak;
    peak.freqHz = 800.0;
    peak.gainDb = -5.0;
    c.push(peak);
    const double worst = worstFullScaleError(c, 48000.0, 1 << 16, ChannelView::left);
    INFO("worst " << worst);
    CHECK(worst <= 1e-6);
}

TEST_CASE("tail length: after the reported tail the impulse response is 60 dB down",
          "[response][comb][echo]")
{
    // Source: definition of a -60 dB decay time (common practice for reverberant tails);
    // checked on the rendered impulse response of chains with slow poles, a feedback comb and
    // an echo canceller: past the reported tail every sample is below 1e-3 of the peak, and
    // the report stays within the same order (0.5 to 10 s for a 0.66 s comb decay).
    ChainSpec c;
    StageSpec comb;
    comb.type = StageType::comb;
    comb.comb.mode = CombMode::feedback;
    comb.comb.delayMs = 10.0;
    comb.comb.gain = 0.9;
    c.push(comb);
    StageSpec peak;
    peak.freqHz = 100.0;
    peak.gainDb = 12.0;
    peak.q = 20.0;
    c.push(peak);
    StageSpec echo;
    echo.type = StageType::echoCancel;
    echo.echo.numReflections = 1;
    echo.echo.reflections[0] = {7.0, 0.5};
    c.push(echo);
    const double fs = 48000.0;
    const double tail = chainTailSeconds(c, fs);
    INFO("reported tail " << tail << " s");
    REQUIRE(tail > 0.5);
    REQUIRE(tail < 10.0);
    const auto ir = impulseResponse(c, fs, static_cast<int>(fs * 12.0));
    double peakValue = 0.0;
    for (double v : ir)
        peakValue = std::max(peakValue, std::abs(v));
    double after = 0.0;
    for (std::size_t i = static_cast<std::size_t>(tail * fs); i < ir.size(); ++i)
        after = std::max(after, std::abs(ir[i]));
    CHECK(after <= 1e-3 * peakValue);
}
