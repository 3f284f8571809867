#include "PassFilters.h"

#include <algorithm>
#include <cmath>
#include <numbers>

// Mode note: for high- and low-pass sections `accurate` is the bilinear design. The
// bilinear transform with the cutoff prewarped keeps, exactly, the properties these filters
// are chosen for: -3.01 dB (Butterworth) or -6.02 dB (Linkwitz-Riley) at the cutoff, the
// all-pass sum of a Linkwitz-Riley low/high pair (it maps the analog identity
// LP(s) + HP(s) = all-pass onto z), and a full-order slope in the stop band. A magnitude-
// matched low-pass would lift the forced zero at Nyquist but break the crossover sum.

namespace kerf::dsp
{

namespace
{

/// One bilinear section of the analog prototype 1/(s^2 + s/Q + 1) (low) or
/// s^2/(s^2 + s/Q + 1) (high), with s = (1/K)(1 - z^-1)/(1 + z^-1), K = tan(pi fc/fs):
/// the bilinear transform with prewarping (Audio EQ Cookbook LPF/HPF in the K form;
/// A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing", bilinear transform).
BiquadCoeffs secondOrder(double K, double Q, bool low) noexcept
{
    const double K2 = K * K;
    const double norm = 1.0 / (1.0 + K / Q + K2);
    const double b0 = low ? K2 * norm : norm;
    return {b0, low ? 2.0 * b0 : -2.0 * b0, b0, 2.0 * (K2 - 1.0) * norm, (1.0 - K / Q + K2) * norm};
}

/// One bilinear section of 1/(s + 1) (low) or s/(s + 1) (high), same substitution.
BiquadCoeffs firstOrder(double K, bool low) noexcept
{
    const double norm = 1.0 / (1.0 + K);
    const double b0 = low ? K * norm : norm;
    return {b0, low ? b0 : -b0, 0.0, (K - 1.0) * norm, 0.0};
}

/// The product of two identical first-order sections as one second-order section.
BiquadCoeffs squared(const BiquadCoeffs& c) noexcept
{
    return {c.b0 * c.b0, 2.0 * c.b0 * c.b1, c.b1 * c.b1, 2.0 * c.a1, c.a1 * c.a1};
}

DesignedSections designPass(double freqHz, int order, PassAlignment alignment, double q,
                            double sampleRateHz, bool low) noexcept
{
    const int n = std::clamp(order, 1, 8);
    const double fc = clampDesignFrequency(freqHz, sampleRateHz);
    const double K = std::tan(std::numbers::pi * fc / sampleRateHz);
    const bool lr = alignment == PassAlignment::linkwitzRiley && n % 2 == 0;
    const int bw = lr ? n / 2 : n; // Linkwitz-Riley 2M = Butterworth M squared
    DesignedSections out;

    // Butterworth poles: s_k = exp(j pi (2k + M + 1)/(2M)), k = 0..M-1 (S. Butterworth,
    // 1930; as in scipy.signal.buttap). The pair k is s^2 + 2 sin(theta_k) s + 1 with
    // theta_k = pi(2k+1)/(2M), so Q_k = 1/(2 sin theta_k) (k = 0 has the highest Q).
    // An odd order adds the real pole s = -1.
    if (bw % 2 == 1)
    {
        const BiquadCoeffs f = firstOrder(K, low);
        out.push(lr ? squared(f) : f);
    }
    // Rising Q: k from the pair nearest the real axis (largest theta) down to k = 0.
    for (int k = bw / 2 - 1; k >= 0; --k)
    {
        const double theta = std::numbers::pi * (2.0 * k + 1.0) / (2.0 * bw);
        double Q = 1.0 / (2.0 * std::sin(theta));
        if (n == 2 && !lr && q > 0.0) // resonant corner of an order-2 section
            Q = std::max(q, 1.0e-3);
        const BiquadCoeffs s = secondOrder(K, Q, low);
        out.push(s);
        if (lr)
            out.push(s);
    }
    return out;
}

} // namespace

DesignedSections designLowPass(double freqHz, int order, PassAlignment alignment, double q,
                               double sampleRateHz, DesignMode) noexcept
{
    return designPass(freqHz, order, alignment, q, sampleRateHz, true);
}

DesignedSections designHighPass(double freqHz, int order, PassAlignment alignment, double q,
                                double sampleRateHz, DesignMode) noexcept
{
    return designPass(freqHz, order, alignment, q, sampleRateHz, false);
}

} // namespace kerf::dsp
