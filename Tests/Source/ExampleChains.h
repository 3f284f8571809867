#pragma once
// Chain-file texts shared by the Source tests (synthetic settings, one stage of each type).

namespace kerf::test
{

/// Every section type once, with channel routing and both design modes.
inline constexpr const char* kEveryTypeChain = R"({"format": "kerf-chain", "version": 1, "stages": [
  {"type": "high_pass", "freq_hz": 60, "order": 4, "alignment": "linkwitz_riley"},
  {"type": "low_shelf", "freq_hz": 150, "gain_db": 4, "slope": 0.8, "channels": "left"},
  {"type": "peaking", "freq_hz": 900, "gain_db": -7, "q": 3, "design": "bilinear"},
  {"type": "notch", "freq_hz": 3000, "q": 6, "channels": "mid"},
  {"type": "band_pass", "freq_hz": 2000, "q": 0.3, "channels": "side"},
  {"type": "all_pass", "freq_hz": 500, "order": 1},
  {"type": "tilt", "freq_hz": 1200, "gain_db": 3, "channels": "right"},
  {"type": "high_shelf", "freq_hz": 9000, "gain_db": -5},
  {"type": "low_pass", "freq_hz": 16000, "order": 2, "q": 2.5, "enabled": false}]})";

} // namespace kerf::test
