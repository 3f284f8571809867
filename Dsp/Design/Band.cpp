#include "Band.h"

#include "Matched.h"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace kerf::dsp
{

namespace
{
double omegaOf(double freqHz, double sampleRateHz) noexcept
{
    return 2.0 * std::numbers::pi * clampDesignFrequency(freqHz, sampleRateHz) / sampleRateHz;
}
} // namespace

BiquadCoeffs designNotch(double freqHz, double q, double sampleRateHz, DesignMode mode) noexcept
{
    const double w0 = omegaOf(freqHz, sampleRateHz);
    const double safeQ = std::max(q, 1.0e-3);
    const double cosW0 = std::cos(w0);
    if (mode == DesignMode::bilinear)
    {
        // Audio EQ Cookbook, notch: alpha = sin(w0)/(2Q); b0 = 1, b1 = -2cos(w0), b2 = 1,
        // a0 = 1 + alpha, a1 = -2cos(w0), a2 = 1 - alpha.
        const double alpha = std::sin(w0) / (2.0 * safeQ);
        const double a0 = 1.0 + alpha;
        return {1.0 / a0, -2.0 * cosW0 / a0, 1.0 / a0, -2.0 * cosW0 / a0, (1.0 - alpha) / a0};
    }
    // Poles: M. Vicanek, "Matched Second Order Digital Filters" (2016). Zeros at e^{+-j w0}
    // (the prototype's zeros at s = +-j w0 mapped by z = e^{s}), scaled for H(1) = 1.
    double a1, a2;
    matched::poles(w0, safeQ, a1, a2);
    const double k = (1.0 + a1 + a2) / (2.0 - 2.0 * cosW0);
    return {k, -2.0 * cosW0 * k, k, a1, a2};
}

BiquadCoeffs designBandPass(double freqHz, double q, double sampleRateHz, DesignMode mode) noexcept
{
    const double w0 = omegaOf(freqHz, sampleRateHz);
    const double safeQ = std::max(q, 1.0e-3);
    if (mode == DesignMode::bilinear)
    {
        // Audio EQ Cookbook, BPF (constant 0 dB peak gain): b0 = alpha, b1 = 0,
        // b2 = -alpha, a0 = 1 + alpha, a1 = -2cos(w0), a2 = 1 - alpha.
        const double alpha = std::sin(w0) / (2.0 * safeQ);
        const double a0 = 1.0 + alpha;
        return {alpha / a0, 0.0, -alpha / a0, -2.0 * std::cos(w0) / a0, (1.0 - alpha) / a0};
    }
    // M. Vicanek, "Matched Second Order Digital Filters" (2016), band-pass: matched poles;
    // |H|^2 = 0 at DC, 1 at f0, and the prototype's
    // (W/q)^2 / ((1 - W^2)^2 + (W/q)^2) at Nyquist (W = pi/w0).
    double a1, a2;
    matched::poles(w0, safeQ, a1, a2);
    const double W = std::numbers::pi / w0;
    const double wq = W / safeQ;
    const double h2Nyquist = wq * wq / ((1.0 - W * W) * (1.0 - W * W) + wq * wq);
    return matched::numeratorMatched(a1, a2, 0.0, 1.0, w0, h2Nyquist);
}

BiquadCoeffs designAllPass(double freqHz, int order, double q, double sampleRateHz,
                           DesignMode) noexcept
{
    const double w0 = omegaOf(freqHz, sampleRateHz);
    if (order <= 1)
    {
        // Bilinear transform of (1 - s)/(1 + s) with s prewarped to f0 (K = tan(w0/2)):
        // H(z) = (c + z^-1)/(1 + c z^-1), c = (K - 1)/(K + 1) (common practice; Oppenheim &
        // Schafer, bilinear transform).
        const double K = std::tan(0.5 * w0);
        const double c = (K - 1.0) / (K + 1.0);
        return {c, 1.0, 0.0, c, 0.0};
    }
    // Audio EQ Cookbook, APF: alpha = sin(w0)/(2Q); b0 = 1 - alpha, b1 = -2cos(w0),
    // b2 = 1 + alpha, a0 = 1 + alpha, a1 = -2cos(w0), a2 = 1 - alpha.
    const double alpha = std::sin(w0) / (2.0 * std::max(q, 1.0e-3));
    const double a0 = 1.0 + alpha;
    const double a1 = -2.0 * std::cos(w0) / a0;
    const double a2 = (1.0 - alpha) / a0;
    return {a2, a1, 1.0, a1, a2};
}

} // namespace kerf::dsp
