#include "Matched.h"

#include <algorithm>
#include <cmath>

namespace kerf::dsp::matched
{

void poles(double omega, double q, double& a1, double& a2) noexcept
{
    // M. Vicanek, "Matched Second Order Digital Filters" (2016), matched poles:
    //   zeta = 1/(2Q); a2 = e^{-2 zeta w0};
    //   a1 = -2 e^{-zeta w0} cos(sqrt(1 - zeta^2) w0)    (zeta <= 1)
    //   a1 = -2 e^{-zeta w0} cosh(sqrt(zeta^2 - 1) w0)   (zeta > 1)
    const double zeta = 0.5 / q;
    const double decay = std::exp(-zeta * omega);
    if (zeta <= 1.0)
        a1 = -2.0 * decay * std::cos(std::sqrt(1.0 - zeta * zeta) * omega);
    else
        a1 = -2.0 * decay * std::cosh(std::sqrt(zeta * zeta - 1.0) * omega);
    a2 = decay * decay;
}

bool factor(double P0, double P1, double P2, double c[3]) noexcept
{
    // Vicanek (2016): |c(e^jw)|^2 = P0 phi0 + P1 phi1 + P2 phi2 with P0 = (c0+c1+c2)^2,
    // P1 = (c0-c1+c2)^2, P2 = -4 c0 c2; so c0 + c2 = W, c0 c2 = -P2/4, c1 = (r0 - r1)/2.
    if (!(P0 >= 0.0) || !(P1 >= 0.0))
        return false;
    const double r0 = std::sqrt(P0);
    for (const double sign : {1.0, -1.0})
    {
        const double r1 = sign * std::sqrt(P1);
        const double W = 0.5 * (r0 + r1);
        const double d = W * W + P2;
        if (d < 0.0)
            continue;
        const double c0 = W >= 0.0 ? 0.5 * (W + std::sqrt(d)) : 0.5 * (W - std::sqrt(d));
        if (c0 == 0.0)
            continue;
        c[0] = c0;
        c[1] = 0.5 * (r0 - r1);
        c[2] = -P2 / (4.0 * c0);
        return true;
    }
    return false;
}

BiquadCoeffs numeratorMatched(double a1, double a2, double h2Dc, double h2Mid, double omegaMid,
                              double h2Nyquist) noexcept
{
    // Vicanek (2016): A0 = (1+a1+a2)^2, A1 = (1-a1+a2)^2, A2 = -4 a2;
    // B0 = h2(0) A0, B1 = h2(pi) A1, B2 from |B|^2 = h2(wm) |A|^2 at the middle frequency.
    const double A0 = (1.0 + a1 + a2) * (1.0 + a1 + a2);
    const double A1 = (1.0 - a1 + a2) * (1.0 - a1 + a2);
    const double A2 = -4.0 * a2;
    const double s = std::sin(0.5 * omegaMid);
    const double p1 = s * s;
    const double p0 = 1.0 - p1;
    const double p2 = 4.0 * p0 * p1;
    const double B0 = h2Dc * A0;
    const double B1 = h2Nyquist * A1;
    const double aMid = A0 * p0 + A1 * p1 + A2 * p2;
    const double B2 = (h2Mid * aMid - B0 * p0 - B1 * p1) / p2;
    double b[3];
    if (!factor(B0, B1, B2, b))
    {
        // Not realisable exactly: take the closest realisable B2 (double zero, W^2 + B2 = 0),
        // which keeps DC and Nyquist exact (common practice for this fallback).
        const double W = 0.5 * (std::sqrt(B0) + std::sqrt(B1));
        factor(B0, B1, -W * W, b);
    }
    return {b[0], b[1], b[2], a1, a2};
}

BiquadCoeffs inverse(const BiquadCoeffs& c) noexcept
{
    // 1/H(z) = (1 + a1 z^-1 + a2 z^-2) / (b0 + b1 z^-1 + b2 z^-2), renormalised by b0.
    return {1.0 / c.b0, c.a1 / c.b0, c.a2 / c.b0, c.b1 / c.b0, c.b2 / c.b0};
}

bool isStable(const BiquadCoeffs& c) noexcept
{
    // Jury's conditions for z^2 + a1 z + a2 (common practice): |a2| < 1, |a1| < 1 + a2.
    return std::abs(c.a2) < 1.0 && std::abs(c.a1) < 1.0 + c.a2;
}

} // namespace kerf::dsp::matched
