#include "EchoCanceller.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace kerf::dsp
{

namespace
{

/// Minimum whole-sample delay of every reflection path (the recursion reads only the past).
constexpr int kMinWhole = 1;
/// Output magnitude at which the runaway guard clears the state of an unstable exact model.
constexpr double kRunawayLimit = 1.0e6;

EchoCancelSettings clampSettings(const EchoCancelSettings& in) noexcept
{
    EchoCancelSettings s = in;
    s.numReflections = std::clamp(s.numReflections, 0, kMaxEchoReflections);
    s.terms = std::clamp(s.terms, 1, kMaxEchoSeriesTerms);
    s.interpolationOrder = std::clamp(s.interpolationOrder, 1, kMaxLagrangeOrder);
    for (auto& r : s.reflections)
    {
        r.delayMs = std::clamp(r.delayMs, kMinEchoDelayMs, kMaxEchoDelayMs);
        if (!std::isfinite(r.gain))
            r.gain = 0.0;
    }
    return s;
}

double msToSamples(double ms, double sampleRateHz) noexcept
{
    return ms * 1.0e-3 * sampleRateHz;
}

int nextPow2(int v)
{
    int p = 1;
    while (p < v)
        p <<= 1;
    return p;
}

} // namespace

std::vector<double> echoModelPolynomial(const EchoCancelSettings& settingsIn, double sampleRateHz)
{
    const EchoCancelSettings s = clampSettings(settingsIn);
    const int order = s.interpolationOrder;
    std::vector<double> p(1, 1.0);
    for (int k = 0; k < s.numReflections; ++k)
    {
        const auto& r = s.reflections[static_cast<std::size_t>(k)];
        const DelaySplit d = splitDelay(msToSamples(r.delayMs, sampleRateHz),
                                        DelayInterpolation::lagrange, order, kMinWhole);
        double h[kMaxLagrangeOrder + 1];
        lagrangeTaps(d.interpolatorSamples, order, h);
        const std::size_t need = static_cast<std::size_t>(d.wholeSamples + order + 1);
        if (p.size() < need)
            p.resize(need, 0.0);
        for (int i = 0; i <= order; ++i)
            p[static_cast<std::size_t>(d.wholeSamples + i)] += r.gain * h[i];
    }
    while (p.size() > 1 && p.back() == 0.0)
        p.pop_back(); // a root at z = 0 is inside the unit circle
    return p;
}

bool schurCohnStable(std::vector<double> c, int* failingDegree, double* failingK)
{
    // Step-down recursion (Schur-Cohn / Jury; Proakis & Manolakis, from memory): with A_m monic
    // of degree m, k_m = A_m's last coefficient and
    //   A_{m-1}(z) = (A_m(z) - k_m z^-m A_m(1/z)) / (1 - k_m^2);
    // A_m has all roots inside the unit circle iff |k_m| < 1 and A_{m-1} has.
    if (c.empty() || c[0] == 0.0)
    {
        if (failingDegree)
            *failingDegree = 0;
        if (failingK)
            *failingK = INFINITY;
        return false;
    }
    const double c0 = c[0];
    for (double& v : c)
        v /= c0;
    for (std::size_t m = c.size() - 1; m >= 1; --m)
    {
        const double k = c[m];
        if (!(std::abs(k) < 1.0))
        {
            if (failingDegree)
                *failingDegree = static_cast<int>(m);
            if (failingK)
                *failingK = std::abs(k);
            return false;
        }
        const double scale = 1.0 / (1.0 - k * k);
        for (std::size_t i = 1, j = m - 1; i <= j; ++i, --j)
        {
            const double ci = c[i], cj = c[j];
            if (i == j)
                c[i] = ci * (1.0 - k) * scale; // = ci / (1 + k)
            else
            {
                c[i] = (ci - k * cj) * scale;
                c[j] = (cj - k * ci) * scale;
            }
        }
    }
    if (failingDegree)
        *failingDegree = 0;
    if (failingK)
        *failingK = 0.0;
    return true;
}

EchoStability checkEchoStability(const EchoCancelSettings& settingsIn, double sampleRateHz)
{
    const EchoCancelSettings s = clampSettings(settingsIn);
    EchoStability r;
    r.stable = schurCohnStable(echoModelPolynomial(s, sampleRateHz), &r.failingDegree,
                               &r.failingReflectionCoefficient);
    if (r.stable)
        return r;
    std::string why;
    double sumAbs = 0.0;
    for (int k = 0; k < s.numReflections; ++k)
    {
        const auto& e = s.reflections[static_cast<std::size_t>(k)];
        sumAbs += std::abs(e.gain);
        if (std::abs(e.gain) >= 1.0)
        {
            char buf[160];
            std::snprintf(buf, sizeof buf,
                          " Reflection %d (%.3f ms, gain %.3f) is at least as strong as the "
                          "direct sound.",
                          k + 1, e.delayMs, e.gain);
            why += buf;
        }
    }
    char head[400];
    std::snprintf(head, sizeof head,
                  "The exact inverse of this echo model is unstable: 1 + sum a_k z^-D_k has a "
                  "root on or outside the unit circle (Schur-Cohn test failed at degree %d, "
                  "|k| = %.4f), so the recursive cancellation would grow without bound.",
                  r.failingDegree, r.failingReflectionCoefficient);
    r.message = head + why;
    char todo[300];
    std::snprintf(todo, sizeof todo,
                  " What to do: lower the gains (a sum of |gain| below 1 is always stable; now "
                  "%.3f), or use method 'series' (always stable, partial cancellation), or for "
                  "a file, render offline with 'non_causal'.",
                  sumAbs);
    r.message += todo;
    return r;
}

ResponseValue echoModelResponse(const EchoCancelSettings& settingsIn, double sampleRateHz,
                                double omega) noexcept
{
    const EchoCancelSettings s = clampSettings(settingsIn);
    ResponseValue p = responseConstant(1.0);
    for (int k = 0; k < s.numReflections; ++k)
    {
        const auto& r = s.reflections[static_cast<std::size_t>(k)];
        p = p + r.gain * fractionalDelayResponse(msToSamples(r.delayMs, sampleRateHz),
                                                 DelayInterpolation::lagrange, s.interpolationOrder,
                                                 kMinWhole, omega);
    }
    return p;
}

ResponseValue echoCancelResponseValue(const EchoCancelSettings& settingsIn, double sampleRateHz,
                                      double omega) noexcept
{
    const EchoCancelSettings s = clampSettings(settingsIn);
    const ResponseValue p = echoModelResponse(s, sampleRateHz, omega);
    if (s.method == EchoMethod::exact)
        return responseConstant(1.0) / p;
    // Horner form of the series: S_0 = 1, S_j = 1 - A S_{j-1}, the same cascade as process().
    const ResponseValue a = p - responseConstant(1.0);
    ResponseValue sum = responseConstant(1.0);
    for (int j = 0; j < s.terms; ++j)
        sum = responseConstant(1.0) - a * sum;
    return sum;
}

std::complex<double> echoCancelResponse(const EchoCancelSettings& settings, double sampleRateHz,
                                        double omega) noexcept
{
    return echoCancelResponseValue(settings, sampleRateHz, omega).h;
}

double echoCancelGroupDelay(const EchoCancelSettings& settings, double sampleRateHz,
                            double omega) noexcept
{
    return echoCancelResponseValue(settings, sampleRateHz, omega).groupDelaySamples();
}

void EchoCanceller::prepare(double sampleRateHz, int /*maxBlockSize*/, int channels)
{
    sampleRateHz_ = sampleRateHz;
    channels_ = std::max(0, channels);
    const int longest = static_cast<int>(std::ceil(msToSamples(kMaxEchoDelayMs, sampleRateHz))) +
                        kMaxLagrangeOrder + 2;
    lineLength_ = nextPow2(longest);
    mask_ = lineLength_ - 1;
    lines_.assign(static_cast<std::size_t>(channels_) * (kMaxEchoSeriesTerms + 1) *
                      static_cast<std::size_t>(lineLength_),
                  0.0);
    writePos_.assign(static_cast<std::size_t>(channels_), 0);
    setSettings(settings_);
    reset();
}

void EchoCanceller::reset() noexcept
{
    std::fill(lines_.begin(), lines_.end(), 0.0);
    std::fill(writePos_.begin(), writePos_.end(), 0);
}

void EchoCanceller::setSettings(const EchoCancelSettings& settingsIn) noexcept
{
    settings_ = clampSettings(settingsIn);
    const int order = settings_.interpolationOrder;
    numPaths_ = 0;
    for (int k = 0; k < settings_.numReflections; ++k)
    {
        const auto& r = settings_.reflections[static_cast<std::size_t>(k)];
        if (r.gain == 0.0)
            continue;
        const DelaySplit d = splitDelay(msToSamples(r.delayMs, sampleRateHz_),
                                        DelayInterpolation::lagrange, order, kMinWhole);
        Path& p = paths_[static_cast<std::size_t>(numPaths_++)];
        p.whole = d.wholeSamples;
        p.taps = order + 1;
        double h[kMaxLagrangeOrder + 1];
        lagrangeTaps(d.interpolatorSamples, order, h);
        for (int i = 0; i <= order; ++i)
            p.weighted[i] = r.gain * h[i];
    }
}

double EchoCanceller::processSample(int channel, double x) noexcept
{
    const std::size_t perLine = static_cast<std::size_t>(lineLength_);
    double* base =
        lines_.data() + static_cast<std::size_t>(channel) * (kMaxEchoSeriesTerms + 1) * perLine;
    int& pos = writePos_[static_cast<std::size_t>(channel)];
    const int w = pos;
    pos = (pos + 1) & mask_;

    // A applied to the line `in` at the current time (reads only samples >= 1 old).
    auto applyA = [&](const double* in) noexcept
    {
        double acc = 0.0;
        for (int k = 0; k < numPaths_; ++k)
        {
            const Path& p = paths_[static_cast<std::size_t>(k)];
            const int start = w - p.whole;
            for (int i = 0; i < p.taps; ++i)
                acc += p.weighted[i] * in[(start - i) & mask_];
        }
        return acc;
    };

    if (settings_.method == EchoMethod::exact)
    {
        // z[n] = y[n] - sum_k a_k (L_k * z)[n - M_k]
        double z = x - applyA(base);
        if (!(std::abs(z) < kRunawayLimit))
        {
            // Runaway guard for a model that was not checked: clear this channel's memory.
            std::fill(base, base + perLine, 0.0);
            z = 0.0;
        }
        base[w] = z;
        return z;
    }
    // Series, Horner cascade: v_0 = x, v_j = x - A v_{j-1}, output v_T.
    base[w] = x;
    double v = x;
    for (int j = 1; j <= settings_.terms; ++j)
    {
        const double* prev = base + static_cast<std::size_t>(j - 1) * perLine;
        v = x - applyA(prev);
        base[static_cast<std::size_t>(j) * perLine + static_cast<std::size_t>(w)] = v;
    }
    return v;
}

void EchoCanceller::process(double* const* channels, int numChannels, int n) noexcept
{
    const int nc = std::min(numChannels, channels_);
    for (int c = 0; c < nc; ++c)
    {
        double* d = channels[c];
        for (int i = 0; i < n; ++i)
            d[i] = processSample(c, d[i]);
    }
}

void EchoCanceller::process(float* const* channels, int numChannels, int n) noexcept
{
    const int nc = std::min(numChannels, channels_);
    for (int c = 0; c < nc; ++c)
    {
        float* d = channels[c];
        for (int i = 0; i < n; ++i)
            d[i] = static_cast<float>(processSample(c, static_cast<double>(d[i])));
    }
}

namespace
{

/// The reversed-time model of cancelEchoNonCausal, or false when no pivot exists.
bool reversedModel(const EchoCancelSettings& s, double sampleRateHz, EchoCancelSettings& rev,
                   int& pivot, std::string& why)
{
    pivot = -1;
    for (int k = 0; k < s.numReflections; ++k)
        if (s.reflections[static_cast<std::size_t>(k)].gain != 0.0 &&
            (pivot < 0 || s.reflections[static_cast<std::size_t>(k)].delayMs >
                              s.reflections[static_cast<std::size_t>(pivot)].delayMs))
            pivot = k;
    if (pivot < 0)
    {
        why = "The model has no reflection to cancel.";
        return false;
    }
    const auto& p = s.reflections[static_cast<std::size_t>(pivot)];
    rev = s;
    rev.method = EchoMethod::exact;
    rev.numReflections = 0;
    rev.reflections[static_cast<std::size_t>(rev.numReflections++)] = {p.delayMs, 1.0 / p.gain};
    const double minGapMs = 1.0e3 * (kMinWhole + 0.5 * (s.interpolationOrder + 1)) / sampleRateHz;
    for (int k = 0; k < s.numReflections; ++k)
    {
        const auto& r = s.reflections[static_cast<std::size_t>(k)];
        if (k == pivot || r.gain == 0.0)
            continue;
        const double gap = p.delayMs - r.delayMs;
        if (gap < std::max(minGapMs, kMinEchoDelayMs))
        {
            why = "Two reflections are too close in delay for the backward recursion.";
            return false;
        }
        rev.reflections[static_cast<std::size_t>(rev.numReflections++)] = {gap, r.gain / p.gain};
    }
    return true;
}

} // namespace

NonCausalResult cancelEchoNonCausal(const EchoCancelSettings& settingsIn, double sampleRateHz,
                                    double* samples, std::size_t n)
{
    const EchoCancelSettings s = clampSettings(settingsIn);
    NonCausalResult result;
    EchoCancelSettings rev;
    int pivot = -1;
    if (!reversedModel(s, sampleRateHz, rev, pivot, result.message))
        return result;
    const EchoStability st = checkEchoStability(rev, sampleRateHz);
    if (!st.stable)
    {
        result.message =
            "The backward (non-causal) inverse of this model is unstable too: not every root "
            "of 1 + sum a_k z^-D_k lies outside the unit circle. If every reflection is weaker "
            "than the direct sound, use method 'exact' or 'series' instead.";
        return result;
    }
    const auto& p = s.reflections[static_cast<std::size_t>(pivot)];
    // Reversed time: u[m] = y[N-1-m]; input to the recursion is (1/a_p) u[m - D_p].
    std::vector<double> u(samples, samples + n);
    std::reverse(u.begin(), u.end());
    const DelaySplit d = splitDelay(msToSamples(p.delayMs, sampleRateHz),
                                    DelayInterpolation::lagrange, s.interpolationOrder, 0);
    double h[kMaxLagrangeOrder + 1];
    lagrangeTaps(d.interpolatorSamples, s.interpolationOrder, h);
    std::vector<double> v(n, 0.0);
    for (std::size_t m = 0; m < n; ++m)
    {
        double acc = 0.0;
        for (int i = 0; i <= s.interpolationOrder; ++i)
        {
            const long long idx = static_cast<long long>(m) - d.wholeSamples - i;
            if (idx >= 0)
                acc += h[i] * u[static_cast<std::size_t>(idx)];
        }
        v[m] = acc / p.gain;
    }
    EchoCanceller c;
    c.prepare(sampleRateHz, 4096, 1);
    c.setSettings(rev);
    for (std::size_t off = 0; off < n; off += 4096)
    {
        double* ch[1] = {v.data() + off};
        c.process(ch, 1, static_cast<int>(std::min<std::size_t>(4096, n - off)));
    }
    for (std::size_t i = 0; i < n; ++i)
        samples[i] = v[n - 1 - i];
    result.ok = true;
    return result;
}

ResponseValue echoNonCausalResponseValue(const EchoCancelSettings& settingsIn, double sampleRateHz,
                                         double omega)
{
    const EchoCancelSettings s = clampSettings(settingsIn);
    EchoCancelSettings rev;
    int pivot = -1;
    std::string why;
    if (!reversedModel(s, sampleRateHz, rev, pivot, why))
        return responseConstant(1.0);
    const auto& p = s.reflections[static_cast<std::size_t>(pivot)];
    // In reversed time the filter is G(w) = (1/a_p) Delay_{D_p}(w) / P_rev(w); run backwards,
    // its response at omega is G(-omega), and d/domega G(-omega) = -G'(-omega).
    const ResponseValue delay =
        fractionalDelayResponse(msToSamples(p.delayMs, sampleRateHz), DelayInterpolation::lagrange,
                                s.interpolationOrder, 0, -omega);
    const ResponseValue g = (1.0 / p.gain) * delay / echoModelResponse(rev, sampleRateHz, -omega);
    return {g.h, -g.dh};
}

} // namespace kerf::dsp
