#include "Peaking.h"

#include "Matched.h"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace kerf::dsp
{

double clampDesignFrequency(double freqHz, double sampleRateHz) noexcept
{
    const double upper = kMaxDesignFraction * sampleRateHz;
    if (!(freqHz > 1.0e-3)) // also catches NaN
        return 1.0e-3;
    return std::min(freqHz, upper);
}

BiquadCoeffs designPeakingBilinear(double freqHz, double gainDb, double q,
                                   double sampleRateHz) noexcept
{
    // Audio EQ Cookbook, peakingEQ:
    //   A = 10^(dBgain/40), w0 = 2 pi f0/Fs, alpha = sin(w0)/(2Q)
    //   b0 = 1 + alpha*A, b1 = -2cos(w0), b2 = 1 - alpha*A
    //   a0 = 1 + alpha/A, a1 = -2cos(w0), a2 = 1 - alpha/A
    const double f0 = clampDesignFrequency(freqHz, sampleRateHz);
    const double safeQ = std::max(q, 1.0e-3);
    const double A = std::pow(10.0, gainDb / 40.0);
    const double w0 = 2.0 * std::numbers::pi * f0 / sampleRateHz;
    const double cosW0 = std::cos(w0);
    const double alpha = std::sin(w0) / (2.0 * safeQ);

    const double a0 = 1.0 + alpha / A;
    BiquadCoeffs c;
    c.b0 = (1.0 + alpha * A) / a0;
    c.b1 = (-2.0 * cosW0) / a0;
    c.b2 = (1.0 - alpha * A) / a0;
    c.a1 = (-2.0 * cosW0) / a0;
    c.a2 = (1.0 - alpha / A) / a0;
    return c;
}

namespace
{
/// Below this fraction of fs the matched-pole design of Vicanek (2016) is already within a
/// few hundredths of a dB of the prototype; above it the constrained fit takes over.
constexpr double kFitAboveFraction = 0.05;
/// Upper end of the fitted band, as a fraction of fs (just above the 0.45 fs of the bars).
constexpr double kFitTopFraction = 0.46;
} // namespace

BiquadCoeffs designPeaking(double freqHz, double gainDb, double q, double sampleRateHz,
                           DesignMode mode) noexcept
{
    if (mode == DesignMode::bilinear)
        return designPeakingBilinear(freqHz, gainDb, q, sampleRateHz);
    if (gainDb == 0.0 || !std::isfinite(gainDb))
        return BiquadCoeffs::identity();

    const double f0 = clampDesignFrequency(freqHz, sampleRateHz);
    const double safeQ = std::max(q, 1.0e-3);
    const double w0 = 2.0 * std::numbers::pi * f0 / sampleRateHz;
    // Design the boost; a cut is its exact inverse, because the Cookbook prototype with
    // A -> 1/A is 1/H(s) (common practice). The boost has the high-Q poles, which are
    // matched exactly; the broad zeros are fitted.
    const double A = std::pow(10.0, std::abs(gainDb) / 40.0);
    const double aOverQ = A / safeQ, invAQ = 1.0 / (A * safeQ);
    // |H(j W)|^2 of the Cookbook prototype at W = w/w0:
    //   ((1 - W^2)^2 + (W A/q)^2) / ((1 - W^2)^2 + (W/(A q))^2).
    auto target = [=](double w)
    {
        const double W = w / w0;
        const double re = (1.0 - W * W) * (1.0 - W * W);
        return (re + W * W * aOverQ * aOverQ) / (re + W * W * invAQ * invAQ);
    };

    BiquadCoeffs boost;
    bool fitted =
        f0 >= kFitAboveFraction * sampleRateHz &&
        matched::fitMagnitudeSquared(target, w0, 2.0 * std::numbers::pi * kFitTopFraction, boost);
    // The prototype boost has no zero on the imaginary axis, and a cut is the boost's inverse,
    // so its zeros become the cut's poles: a fit that puts a zero on (or within 1e-6 of) the
    // unit circle is refused (it happened for the widest bells, q 0.025 at +-30 dB, making
    // the cut marginally unstable). Zeros of b0 + b1 z^-1 + b2 z^-2 (common practice).
    if (fitted)
    {
        const double disc = boost.b1 * boost.b1 - 4.0 * boost.b0 * boost.b2;
        const double zeroRadius = disc >= 0.0 ? std::max(std::abs(-boost.b1 + std::sqrt(disc)),
                                                         std::abs(-boost.b1 - std::sqrt(disc))) /
                                                    (2.0 * std::abs(boost.b0))
                                              : std::sqrt(std::abs(boost.b2 / boost.b0));
        fitted = zeroRadius <= 1.0 - 1.0e-6;
    }
    if (!fitted)
    {
        // M. Vicanek, "Matched Second Order Digital Filters" (2016), peaking EQ: poles
        // matched (pole Q = A q), |H| matched at DC (1), at f0 (A^2) and at Nyquist.
        double a1, a2;
        matched::poles(w0, A * safeQ, a1, a2);
        boost = matched::numeratorMatched(a1, a2, 1.0, A * A * A * A, w0, target(std::numbers::pi));
    }
    return gainDb > 0.0 ? boost : matched::inverse(boost);
}

} // namespace kerf::dsp
