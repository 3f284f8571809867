#pragma once
// Accepted ranges of stage fields, shared by the chain-file reader and the plugin's
// parameters so that both refuse or clamp the same values.

namespace kerf::dsp::limits
{

inline constexpr double kFreqMinHz = 10.0;    ///< lowest section frequency
inline constexpr double kFreqMaxHz = 30000.0; ///< highest; designs clamp below Nyquist
inline constexpr double kGainMinDb = -30.0;
inline constexpr double kGainMaxDb = 30.0;
inline constexpr double kQMin = 0.025;
inline constexpr double kQMax = 40.0;

} // namespace kerf::dsp::limits

namespace kerf::dsp::limits
{

inline constexpr double kSlopeMin = 0.1; ///< shelf slope S
inline constexpr double kSlopeMax = 1.0; ///< S = 1: the steepest monotonic shelf (Cookbook)
inline constexpr int kPassOrderMin = 1;  ///< high-/low-pass: 6 dB/oct
inline constexpr int kPassOrderMax = 8;  ///< 48 dB/oct
inline constexpr int kAllPassOrderMin = 1;
inline constexpr int kAllPassOrderMax = 2;
/// Largest |gain| of an echo reflection in a chain file. Above 1 only the offline
/// non-causal inverse is stable for a single reflection.
inline constexpr double kEchoGainMax = 4.0;

} // namespace kerf::dsp::limits
