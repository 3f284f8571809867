#pragma once
// Plain value types shared by every section design. No allocation, no state.

namespace kerf::dsp
{

/// Normalised second-order section: H(z) = (b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2).
/// A first-order section has b2 = a2 = 0.
struct BiquadCoeffs
{
    double b0 = 1.0, b1 = 0.0, b2 = 0.0;
    double a1 = 0.0, a2 = 0.0;

    /// The identity section H(z) = 1.
    static constexpr BiquadCoeffs identity() noexcept { return {}; }
};

/// Largest design frequency as a fraction of the sample rate; designs clamp to it so that a
/// chain written for 96 kHz still loads at 44.1 kHz (common practice: stay clear of Nyquist).
inline constexpr double kMaxDesignFraction = 0.49;

/// Clamps a design frequency into (0, kMaxDesignFraction * sampleRateHz].
double clampDesignFrequency(double freqHz, double sampleRateHz) noexcept;

} // namespace kerf::dsp
