#pragma once
#include "Biquad.h"
#include "Sections.h"

namespace kerf::dsp
{

/// Tilt: the first-order prototype H(s) = (g s/wp + 1)/(s/wp + g), g = 10^(gainDb/40), wp =
/// 2 pi freqHz: -gainDb/2 at DC, 0 dB at the pivot freqHz (clamped to 0.49 fs), +gainDb/2
/// far above (zero at wp/g, pole at wp g). Returns a first-order section (b2 = a2 = 0).
/// `bilinear` = prewarped to the pivot (pivot exactly 0 dB, Nyquist = +gainDb/2);
/// `accurate` = matched first order (pole by z = e^{s}, |H| matched at DC and Nyquist).
BiquadCoeffs designTilt(double freqHz, double gainDb, double sampleRateHz,
                        DesignMode mode) noexcept;

} // namespace kerf::dsp
