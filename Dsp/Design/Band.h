#pragma once
#include "Biquad.h"
#include "Sections.h"

namespace kerf::dsp
{

/// Notch for the prototype H(s) = (s^2 + 1)/(s^2 + s/q + 1): a true null at freqHz (clamped
/// to 0.49 fs), 0 dB at DC; q > 0. `bilinear` = Cookbook notch; `accurate` = matched poles
/// (M. Vicanek 2016) with the zeros exactly on the unit circle at f0, unity gain at DC.
BiquadCoeffs designNotch(double freqHz, double q, double sampleRateHz, DesignMode mode) noexcept;

/// Band-pass for H(s) = (s/q)/(s^2 + s/q + 1): 0 dB peak at freqHz (clamped to 0.49 fs);
/// q > 0. `bilinear` = Cookbook BPF (constant 0 dB peak gain); `accurate` = Vicanek (2016)
/// matched band-pass (poles matched; |H| matched at DC (0), f0 (1) and Nyquist).
BiquadCoeffs designBandPass(double freqHz, double q, double sampleRateHz, DesignMode mode) noexcept;

/// All-pass of order 1 ((1 - s)/(1 + s): -90 degrees at freqHz) or 2 ((s^2 - s/q + 1)/(s^2 +
/// s/q + 1), Cookbook APF: -180 degrees at freqHz); |H| = 1 at every frequency. Other orders
/// clamp to 1..2; q > 0 (order 2 only). Both modes give the prewarped bilinear design, which
/// keeps |H| = 1 and the phase at freqHz exact.
BiquadCoeffs designAllPass(double freqHz, int order, double q, double sampleRateHz,
                           DesignMode mode) noexcept;

} // namespace kerf::dsp
