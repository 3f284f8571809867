#pragma once
// A second-order section realised as a trapezoidal (zero-delay-feedback) state-variable
// filter. Any stable digital biquad maps onto it exactly, and the form stays well behaved
// when its coefficients move (A. Wishnick, "Time-Varying Filters for Musical Applications",
// DAFx-14, 2014; A. Simper, "Solving the continuous SVF equations using trapezoidal
// integration and equivalent currents", Cytomic technical paper, 2013).
#include "../Design/Biquad.h"

namespace kerf::dsp
{

/// Processing coefficients of one trapezoidal SVF section.
/// y = mHigh * high + mBand * band + mLow * low, with the SVF tuned by g = tan(pi fc / fs)
/// and damping k (= 1/Q of the poles).
struct SvfCoeffs
{
    double g = 1.0, k = 2.0;
    double mHigh = 1.0, mBand = 2.0, mLow = 1.0; // identity: (p^2 + 2p + 1)/(p^2 + 2p + 1)
    double a1 = 0.0, a2 = 0.0, a3 = 0.0;         // derived, see updateDerived()

    /// Recomputes the derived per-sample constants from g and k.
    void updateDerived() noexcept;
};

/// Converts a stable normalised biquad (1 + a1 + a2 > 0 and 1 - a1 + a2 > 0) into SVF
/// form by the inverse bilinear map z^-1 = (1 - s)/(1 + s). The result realises the same
/// H(z) up to rounding. An unstable or degenerate input yields the identity section.
SvfCoeffs toSvf(const BiquadCoeffs& c) noexcept;

/// Per-channel state of one SVF section (two trapezoidal integrator memories).
struct SvfState
{
    double ic1eq = 0.0, ic2eq = 0.0;
    void reset() noexcept { ic1eq = ic2eq = 0.0; }
};

/// One sample through one section.
inline double processSvf(const SvfCoeffs& c, SvfState& s, double v0) noexcept
{
    const double v3 = v0 - s.ic2eq;
    const double v1 = c.a1 * s.ic1eq + c.a2 * v3;
    const double v2 = s.ic2eq + c.a2 * s.ic1eq + c.a3 * v3;
    s.ic1eq = 2.0 * v1 - s.ic1eq;
    s.ic2eq = 2.0 * v2 - s.ic2eq;
    const double high = v0 - c.k * v1 - v2;
    return c.mHigh * high + c.mBand * v1 + c.mLow * v2;
}

} // namespace kerf::dsp
