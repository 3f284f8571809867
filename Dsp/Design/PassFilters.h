#pragma once
#include "Biquad.h"
#include "Sections.h"

namespace kerf::dsp
{

/// Alignment of a high-/low-pass: Butterworth (maximally flat, -3.01 dB at the cutoff) or
/// Linkwitz-Riley (a Butterworth of half the order, squared; -6.02 dB at the cutoff).
enum class PassAlignment
{
    butterworth,
    linkwitzRiley,
};

/// Low-pass of order 1..8 (clamped); freqHz: cutoff (clamped to 0.49 fs); q: pole Q of an
/// order-2 Butterworth (resonant corner), <= 0 or NaN for the Butterworth 1/sqrt(2), ignored
/// otherwise; linkwitzRiley with an odd order falls back to Butterworth. Sections ordered by
/// rising pole Q (first-order first), each with unity passband gain. Both modes give the
/// bilinear-transform design with the cutoff prewarped (see PassFilters.cpp for why).
DesignedSections designLowPass(double freqHz, int order, PassAlignment alignment, double q,
                               double sampleRateHz, DesignMode mode) noexcept;

/// High-pass counterpart of designLowPass (same arguments and section order).
DesignedSections designHighPass(double freqHz, int order, PassAlignment alignment, double q,
                                double sampleRateHz, DesignMode mode) noexcept;

} // namespace kerf::dsp
