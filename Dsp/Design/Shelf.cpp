#include "Shelf.h"

#include "Matched.h"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace kerf::dsp
{

double shelfQFromSlope(double gainDb, double slope) noexcept
{
    // Audio EQ Cookbook: alpha = sin(w0)/2 * sqrt((A + 1/A)(1/S - 1) + 2), i.e.
    // 1/Q = sqrt((A + 1/A)(1/S - 1) + 2). The radicand is kept positive for S far above 1.
    const double A = std::pow(10.0, gainDb / 40.0);
    const double s = std::max(slope, 1.0e-3);
    const double radicand = std::max((A + 1.0 / A) * (1.0 / s - 1.0) + 2.0, 1.0e-6);
    return 1.0 / std::sqrt(radicand);
}

namespace
{

BiquadCoeffs shelfBilinear(double f0, double gainDb, double slope, double fs, bool low) noexcept
{
    // Audio EQ Cookbook (W3C Note 2021), lowShelf / highShelf:
    //   A = 10^(dBgain/40), w0 = 2 pi f0/Fs, alpha = sin(w0)/2 sqrt((A + 1/A)(1/S - 1) + 2)
    //   low:  b0 = A((A+1) - (A-1)cos w0 + 2 sqrt(A) alpha), b1 = 2A((A-1) - (A+1)cos w0),
    //         b2 = A((A+1) - (A-1)cos w0 - 2 sqrt(A) alpha), a0 = (A+1) + (A-1)cos w0 + 2
    //         sqrt(A) alpha, a1 = -2((A-1) + (A+1)cos w0), a2 = (A+1) + (A-1)cos w0 - 2
    //         sqrt(A) alpha
    //   high: b0 = A((A+1) + (A-1)cos w0 + 2 sqrt(A) alpha), b1 = -2A((A-1) + (A+1)cos w0),
    //         b2 = A((A+1) + (A-1)cos w0 - 2 sqrt(A) alpha), a0 = (A+1) - (A-1)cos w0 + 2
    //         sqrt(A) alpha, a1 = 2((A-1) - (A+1)cos w0), a2 = (A+1) - (A-1)cos w0 - 2
    //         sqrt(A) alpha
    const double A = std::pow(10.0, gainDb / 40.0);
    const double w0 = 2.0 * std::numbers::pi * f0 / fs;
    const double c = std::cos(w0);
    const double alpha = 0.5 * std::sin(w0) / shelfQFromSlope(gainDb, slope);
    const double k = 2.0 * std::sqrt(A) * alpha;
    const double sign = low ? 1.0 : -1.0;
    const double b0 = A * ((A + 1.0) - sign * (A - 1.0) * c + k);
    const double b1 = sign * 2.0 * A * ((A - 1.0) - sign * (A + 1.0) * c);
    const double b2 = A * ((A + 1.0) - sign * (A - 1.0) * c - k);
    const double a0 = (A + 1.0) + sign * (A - 1.0) * c + k;
    const double a1 = -sign * 2.0 * ((A - 1.0) + sign * (A + 1.0) * c);
    const double a2 = (A + 1.0) + sign * (A - 1.0) * c - k;
    return {b0 / a0, b1 / a0, b2 / a0, a1 / a0, a2 / a0};
}

BiquadCoeffs shelfAccurate(double f0, double gainDb, double slope, double fs, bool low) noexcept
{
    if (gainDb == 0.0 || !std::isfinite(gainDb))
        return BiquadCoeffs::identity();
    // The prototype's pole pair sits at w0/sqrt(A) with the shelf Q (low shelf) or at
    // w0 sqrt(A) (high shelf); its zero pair at the reciprocal place. We design the case whose
    // poles are the lower pair (low-shelf boost, high-shelf cut), so the matched poles never
    // approach Nyquist, and obtain the other sign as its exact inverse: the Cookbook shelf
    // with A -> 1/A (same Q, the Q formula is symmetric in A <-> 1/A) is 1/H(s) (common
    // practice).
    const bool designBoost = low;
    const double designDb = designBoost ? std::abs(gainDb) : -std::abs(gainDb);
    const double A = std::pow(10.0, designDb / 40.0);
    const double Q = shelfQFromSlope(designDb, slope);
    const double w0 = 2.0 * std::numbers::pi * f0 / fs;
    const double sqrtA = std::sqrt(A);
    const double r = sqrtA / Q;
    // |H(jW)|^2 of the Cookbook prototypes at W = w/w0 (see Shelf.h).
    auto target = [=](double w)
    {
        const double W = w / w0, W2 = W * W;
        double num, den;
        if (low)
        {
            num = (A - W2) * (A - W2) + r * r * W2;
            den = (1.0 - A * W2) * (1.0 - A * W2) + r * r * W2;
        }
        else
        {
            num = (1.0 - A * W2) * (1.0 - A * W2) + r * r * W2;
            den = (A - W2) * (A - W2) + r * r * W2;
        }
        return A * A * num / den;
    };
    // M. Vicanek, "Matched Second Order Digital Filters" (2016), applied to the shelf:
    // poles matched (s^2 + s wp/Q + wp^2, wp = w0/sqrt(A) low, w0 sqrt(A) high), numerator
    // matched in magnitude at DC, at f0 (the mid-gain point, |H|^2 = A^2) and at Nyquist.
    const double wp = low ? w0 / sqrtA : w0 * sqrtA;
    double a1, a2;
    matched::poles(wp, Q, a1, a2);
    const BiquadCoeffs c =
        matched::numeratorMatched(a1, a2, target(0.0), target(w0), w0, target(std::numbers::pi));
    return designDb == gainDb ? c : matched::inverse(c);
}

} // namespace

BiquadCoeffs designLowShelf(double freqHz, double gainDb, double slope, double sampleRateHz,
                            DesignMode mode) noexcept
{
    const double f0 = clampDesignFrequency(freqHz, sampleRateHz);
    return mode == DesignMode::bilinear ? shelfBilinear(f0, gainDb, slope, sampleRateHz, true)
                                        : shelfAccurate(f0, gainDb, slope, sampleRateHz, true);
}

BiquadCoeffs designHighShelf(double freqHz, double gainDb, double slope, double sampleRateHz,
                             DesignMode mode) noexcept
{
    const double f0 = clampDesignFrequency(freqHz, sampleRateHz);
    return mode == DesignMode::bilinear ? shelfBilinear(f0, gainDb, slope, sampleRateHz, false)
                                        : shelfAccurate(f0, gainDb, slope, sampleRateHz, false);
}

} // namespace kerf::dsp
