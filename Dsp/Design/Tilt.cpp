#include "Tilt.h"

#include <cmath>
#include <numbers>

namespace kerf::dsp
{

BiquadCoeffs designTilt(double freqHz, double gainDb, double sampleRateHz, DesignMode mode) noexcept
{
    if (gainDb == 0.0 || !std::isfinite(gainDb))
        return BiquadCoeffs::identity();
    const double wp =
        2.0 * std::numbers::pi * clampDesignFrequency(freqHz, sampleRateHz) / sampleRateHz;
    if (mode == DesignMode::bilinear)
    {
        // Bilinear transform of (g s/wp + 1)/(s/wp + g) with s/wp = (1/K)(1 - z^-1)/(1 + z^-1),
        // K = tan(wp/2) (prewarped to the pivot; Oppenheim & Schafer, bilinear transform):
        //   b0 = (g + K)/(1 + g K), b1 = (K - g)/(1 + g K), a1 = (g K - 1)/(1 + g K).
        const double g = std::pow(10.0, gainDb / 40.0);
        const double K = std::tan(0.5 * wp);
        const double n = 1.0 + g * K;
        return {(g + K) / n, (K - g) / n, 0.0, (g * K - 1.0) / n, 0.0};
    }
    // Matched first order (the pole/magnitude matching of M. Vicanek, "Matched Second Order
    // Digital Filters", 2016, reduced to one pole): design the falling tilt, whose pole
    // wp*g (g < 1) is the lower corner and so never nears Nyquist; pole z = e^{-wp g};
    // numerator from |H|^2 at DC (1/g^2) and at Nyquist (prototype at W = pi/wp):
    //   b0 + b1 = sqrt(B0), b0 - b1 = sqrt(B1), B0 = T(0)(1 + a1)^2, B1 = T(pi)(1 - a1)^2.
    // The rising tilt is its exact inverse (the prototype with g -> 1/g is 1/H(s)).
    const double g = std::pow(10.0, -std::abs(gainDb) / 40.0);
    const double a1 = -std::exp(-wp * g);
    const double W = std::numbers::pi / wp;
    const double tNyquist = (g * g * W * W + 1.0) / (W * W + g * g);
    const double r0 = (1.0 + a1) / g;
    const double r1 = (1.0 - a1) * std::sqrt(tNyquist);
    const double b0 = 0.5 * (r0 + r1), b1 = 0.5 * (r0 - r1);
    if (gainDb < 0.0)
        return {b0, b1, 0.0, a1, 0.0};
    return {1.0 / b0, a1 / b0, 0.0, b1 / b0, 0.0};
}

} // namespace kerf::dsp
