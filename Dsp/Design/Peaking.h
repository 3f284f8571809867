#pragma once
#include "Biquad.h"
#include "Sections.h"

namespace kerf::dsp
{

/// Peaking (bell) section, bilinear form of the Audio EQ Cookbook
/// (R. Bristow-Johnson, W3C Working Group Note, 2021, "peakingEQ").
/// freqHz: centre, clamped below Nyquist; gainDb: boost (+) or cut (-) at the centre;
/// q: the Cookbook's Q (> 0); sampleRateHz > 0. Pure, never allocates.
BiquadCoeffs designPeakingBilinear(double freqHz, double gainDb, double q,
                                   double sampleRateHz) noexcept;

/// Peaking section for the analog prototype H(s) = (s^2 + s A/q + 1)/(s^2 + s/(A q) + 1),
/// A = 10^(gainDb/40) (Audio EQ Cookbook). freqHz: centre (clamped to 0.49 fs), gainDb: gain
/// at the centre, q > 0, sampleRateHz > 0. `bilinear` = designPeakingBilinear; `accurate` =
/// magnitude-matched to the prototype without cramping (exact at DC and at f0; see
/// Peaking.cpp: M. Vicanek 2016 below 0.05 fs, a constrained magnitude fit above).
BiquadCoeffs designPeaking(double freqHz, double gainDb, double q, double sampleRateHz,
                           DesignMode mode) noexcept;

} // namespace kerf::dsp
