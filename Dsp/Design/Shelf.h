#pragma once
#include "Biquad.h"
#include "Sections.h"

namespace kerf::dsp
{

/// The Cookbook's shelf Q from slope S: 1/Q = sqrt((A + 1/A)(1/S - 1) + 2), A = 10^(gainDb/40)
/// (Audio EQ Cookbook, W3C Note 2021). slope > 0; 1 = steepest monotonic shelf.
double shelfQFromSlope(double gainDb, double slope) noexcept;

/// Low shelf for the Cookbook prototype H(s) = A (s^2 + (sqrt A/Q) s + A)/(A s^2 + (sqrt A/Q)
/// s + 1): gainDb at DC, 0 dB far above, gainDb/2 at freqHz (clamped to 0.49 fs); slope is
/// the Cookbook's S (> 0, 1 = steepest monotonic). `bilinear` = Cookbook lowShelf;
/// `accurate` = matched design of Shelf.cpp (M. Vicanek 2016 method applied to the shelf).
BiquadCoeffs designLowShelf(double freqHz, double gainDb, double slope, double sampleRateHz,
                            DesignMode mode) noexcept;

/// High shelf for the Cookbook prototype H(s) = A (A s^2 + (sqrt A/Q) s + 1)/(s^2 + (sqrt A/Q)
/// s + A): 0 dB at DC, gainDb far above, gainDb/2 at freqHz; arguments as designLowShelf.
BiquadCoeffs designHighShelf(double freqHz, double gainDb, double slope, double sampleRateHz,
                             DesignMode mode) noexcept;

} // namespace kerf::dsp
