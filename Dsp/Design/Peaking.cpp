#include "Peaking.h"

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

} // namespace kerf::dsp
