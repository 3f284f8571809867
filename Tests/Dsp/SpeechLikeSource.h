#pragma once
// Deterministic speech-like test signal (invented data): a Rosenberg glottal pulse train
// (A. E. Rosenberg, JASA 49, 1971) with gliding, jittered pitch, through a cascade of three
// two-pole formant resonators (D. H. Klatt, JASA 67(3), 1980) moving between vowel targets
// (formant values after G. E. Peterson, H. L. Barney, JASA 24, 1952, from memory), with
// syllable envelopes, fricative-like noise bursts and pauses. Plus helpers the echo tests
// share: a portable random generator, a windowed-sinc fractional delay and power sums.
#include <cmath>
#include <cstdint>
#include <numbers>
#include <vector>

namespace kerf::test
{

/// SplitMix64 (S. Vigna): portable, so every platform makes the same signal for a seed.
struct Rng
{
    std::uint64_t s;
    explicit Rng(std::uint64_t seed) : s(seed) {}
    std::uint64_t next()
    {
        std::uint64_t z = (s += 0x9E3779B97F4A7C15ull);
        z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
        z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
        return z ^ (z >> 31);
    }
    double uniform() { return static_cast<double>(next() >> 11) * (1.0 / 9007199254740992.0); }
    double uniform(double a, double b) { return a + (b - a) * uniform(); }
    /// Standard normal by Box-Muller.
    double normal()
    {
        const double u1 = std::max(uniform(), 1e-300), u2 = uniform();
        return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
    }
};

/// seconds of speech-like signal at sampleRateHz, peak about 0.5.
inline std::vector<double> speechLike(double sampleRateHz, double seconds, std::uint64_t seed)
{
    const double pi = std::numbers::pi;
    const std::size_t n = static_cast<std::size_t>(seconds * sampleRateHz);
    std::vector<double> out(n, 0.0);
    Rng rng(seed);
    static const double vowels[6][3] = {{730, 1090, 2440}, {270, 2290, 3010}, {300, 870, 2240},
                                        {530, 1840, 2480}, {570, 840, 2410},  {660, 1720, 2410}};
    // F4 and F5 fixed (Klatt 1980: 3300/3750 Hz defaults, from memory; a little higher here)
    const double bw[5] = {70.0, 100.0, 140.0, 250.0, 300.0};
    double y1[5] = {0, 0, 0, 0, 0}, y2[5] = {0, 0, 0, 0, 0};
    double f[5] = {500, 1500, 2500, 3500, 4500};
    double prevS = 0.0;
    double phase = 0.0, prevFlow = 0.0;
    double baseF0 = rng.uniform(95.0, 210.0);
    std::size_t t = static_cast<std::size_t>(rng.uniform(0.05, 0.2) * sampleRateHz);
    int syllablesLeft = 0;
    while (t < n)
    {
        if (syllablesLeft == 0)
        {
            // pause between words, new speaker-ish pitch register now and then
            t += static_cast<std::size_t>(rng.uniform(0.08, 0.45) * sampleRateHz);
            syllablesLeft = 2 + static_cast<int>(rng.uniform() * 3.0);
            if (rng.uniform() < 0.3)
                baseF0 = rng.uniform(95.0, 210.0);
            continue;
        }
        --syllablesLeft;
        const double dur = rng.uniform(0.12, 0.32);
        const std::size_t len = static_cast<std::size_t>(dur * sampleRateHz);
        const double* target = vowels[static_cast<int>(rng.uniform() * 6.0) % 6];
        const double f0a = baseF0 * rng.uniform(0.8, 1.25), f0b = baseF0 * rng.uniform(0.75, 1.3);
        const bool fricative = rng.uniform() < 0.25;
        const double fricLen = fricative ? rng.uniform(0.04, 0.1) : 0.0;
        const double amp = rng.uniform(0.4, 1.0);
        for (std::size_t i = 0; i < len && t + i < n; ++i)
        {
            const double u = static_cast<double>(i) / len;
            const double env = std::sin(pi * u) * std::sin(pi * u) * amp;
            // formants glide towards the vowel target (first-order, ~25 ms)
            for (int k = 0; k < 3; ++k)
                f[k] += (target[k] - f[k]) * (1.0 - std::exp(-1.0 / (0.025 * sampleRateHz)));
            const double f0 = (f0a + (f0b - f0a) * u) * (1.0 + 0.01 * rng.normal());
            phase += f0 / sampleRateHz;
            if (phase >= 1.0)
                phase -= 1.0;
            // Rosenberg glottal flow: opening 40 %, closing 16 % of the period
            double flow = 0.0;
            if (phase < 0.4)
                flow = 0.5 * (1.0 - std::cos(pi * phase / 0.4));
            else if (phase < 0.56)
                flow = std::cos(pi * (phase - 0.4) / 0.32);
            double src = (flow - prevFlow) * sampleRateHz / 200.0; // lip radiation
            prevFlow = flow;
            src += 0.02 * rng.normal();
            double v = src;
            for (int k = 0; k < 5; ++k)
            {
                // Klatt (1980) resonator: y = A x + B y1 + C y2
                const double C = -std::exp(-2.0 * pi * bw[k] / sampleRateHz);
                const double B = 2.0 * std::exp(-pi * bw[k] / sampleRateHz) *
                                 std::cos(2.0 * pi * f[k] / sampleRateHz);
                const double A = 1.0 - B - C;
                const double y = A * v + B * y1[k] + C * y2[k];
                y2[k] = y1[k];
                y1[k] = y;
                v = y;
            }
            // +6 dB/octave above about 1.2 kHz, so that the long-term spectrum falls roughly as
            // speech does instead of as five cascaded low-passes
            const double emph = v + (v - prevS) * sampleRateHz / (2.0 * pi * 1200.0);
            prevS = v;
            double s = emph * env;
            if (fricative && u * dur < fricLen)
                s = 0.15 * amp * rng.normal() * std::sin(pi * u * dur / fricLen);
            out[t + i] += s;
        }
        t += len;
    }
    double peak = 1e-12;
    for (double v : out)
        peak = std::max(peak, std::abs(v));
    for (double& v : out)
        v *= 0.5 / peak;
    return out;
}

/// x delayed by delaySamples (fractional) with a Blackman-windowed sinc of 2*half+1 taps
/// (Laakso et al. 1996, windowed-sinc design); samples before the start count as zero.
inline std::vector<double> delayedBySinc(const std::vector<double>& x, double delaySamples,
                                         int half = 64)
{
    const double pi = std::numbers::pi;
    const int d0 = static_cast<int>(std::floor(delaySamples));
    const double frac = delaySamples - d0;
    std::vector<double> h(static_cast<std::size_t>(2 * half + 1));
    for (int k = -half; k <= half; ++k)
    {
        const double t = k - frac;
        const double sinc = t == 0.0 ? 1.0 : std::sin(pi * t) / (pi * t);
        const double u = (t + half + 1) / (2.0 * half + 2.0); // window over the shifted span
        const double w = 0.42 - 0.5 * std::cos(2 * pi * u) + 0.08 * std::cos(4 * pi * u);
        h[static_cast<std::size_t>(k + half)] = sinc * w;
    }
    std::vector<double> y(x.size(), 0.0);
    const long long n = static_cast<long long>(x.size());
    for (long long i = 0; i < n; ++i)
    {
        double acc = 0.0;
        for (int k = -half; k <= half; ++k)
        {
            const long long j = i - d0 - k;
            if (j >= 0 && j < n)
                acc += h[static_cast<std::size_t>(k + half)] * x[static_cast<std::size_t>(j)];
        }
        y[static_cast<std::size_t>(i)] = acc;
    }
    return y;
}

/// Sum of squares.
inline double energy(const std::vector<double>& v)
{
    double s = 0.0;
    for (double x : v)
        s += x * x;
    return s;
}

} // namespace kerf::test
