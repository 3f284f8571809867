#pragma once
#include "Biquad.h"

namespace kerf::dsp
{

/// Peaking (bell) section, bilinear form of the Audio EQ Cookbook
/// (R. Bristow-Johnson, W3C Working Group Note, 2021, "peakingEQ").
/// freqHz: centre, clamped below Nyquist; gainDb: boost (+) or cut (-) at the centre;
/// q: the Cookbook's Q (> 0); sampleRateHz > 0. Pure, never allocates.
BiquadCoeffs designPeakingBilinear(double freqHz, double gainDb, double q,
                                   double sampleRateHz) noexcept;

} // namespace kerf::dsp
