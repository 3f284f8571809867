#include "SvfSection.h"

#include <cmath>

namespace kerf::dsp
{

void SvfCoeffs::updateDerived() noexcept
{
    // Simper (2013): a1 = 1/(1 + g(g + k)), a2 = g a1, a3 = g a2.
    a1 = 1.0 / (1.0 + g * (g + k));
    a2 = g * a1;
    a3 = g * a2;
}

SvfCoeffs toSvf(const BiquadCoeffs& c) noexcept
{
    // Substituting z^-1 = (1 - s)/(1 + s) and multiplying by (1 + s)^2:
    //   A(s) = (1 - a1 + a2) s^2 + 2 (1 - a2) s + (1 + a1 + a2)
    //   B(s) = (b0 - b1 + b2) s^2 + 2 (b0 - b2) s + (b0 + b1 + b2)
    // With s = g p and g^2 = A0/A2, the denominator becomes p^2 + k p + 1.
    const double A2 = 1.0 - c.a1 + c.a2;
    const double A1 = 2.0 * (1.0 - c.a2);
    const double A0 = 1.0 + c.a1 + c.a2;
    const double B2 = c.b0 - c.b1 + c.b2;
    const double B1 = 2.0 * (c.b0 - c.b2);
    const double B0 = c.b0 + c.b1 + c.b2;

    SvfCoeffs out;
    if (!(A2 > 0.0) || !(A0 > 0.0) || !std::isfinite(A1))
    {
        out.updateDerived();
        return out;
    }
    out.g = std::sqrt(A0 / A2);
    out.k = A1 * out.g / A0;
    out.mHigh = B2 / A2;
    out.mBand = B1 * out.g / A0;
    out.mLow = B0 / A0;
    out.updateDerived();
    return out;
}

} // namespace kerf::dsp
