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
