#pragma once
// Building blocks of the `accurate` designs: matched poles, magnitude-matched numerators and
// a constrained magnitude-squared fit. Pure functions, no allocation (fixed-size Eigen).
#include "Biquad.h"

#include <Eigen/Dense>

#include <cmath>

namespace kerf::dsp::matched
{

/// Denominator (a1, a2) whose poles are the impulse-invariant images z = e^{s} of the roots
/// of s^2 + s*omega/q + omega^2; omega in radians per sample (> 0), q > 0.
/// M. Vicanek, "Matched Second Order Digital Filters", 2016, eqs. for a1, a2 (both the
/// under- and over-damped cases).
void poles(double omega, double q, double& a1, double& a2) noexcept;

/// Second-order section with denominator (a1, a2) whose squared magnitude equals h2Dc at DC,
/// h2Mid at omegaMid (0 < omegaMid < pi) and h2Nyquist at Nyquist; minimum-phase numerator.
/// M. Vicanek, "Matched Second Order Digital Filters", 2016 (the phi0/phi1/phi2 form of
/// |H|^2 and the numerator recovery b0 = (W + sqrt(W^2 + B2))/2, b1 = (sqrt B0 - sqrt B1)/2,
/// b2 = -B2/(4 b0)).
BiquadCoeffs numeratorMatched(double a1, double a2, double h2Dc, double h2Mid, double omegaMid,
                              double h2Nyquist) noexcept;

/// Real minimum-phase (c0, c1, c2) with |c0 + c1 z^-1 + c2 z^-2|^2 = P0 phi0 + P1 phi1 +
/// P2 phi2 (phi1 = sin^2(w/2), phi0 = 1 - phi1, phi2 = 4 phi0 phi1); false if none exists.
/// Spectral factorisation of the Vicanek (2016) form, trying both signs of c0 - c1 + c2.
bool factor(double P0, double P1, double P2, double c[3]) noexcept;

/// 1/H of a section (numerator and denominator exchanged, renormalised); the input's zeros
/// must lie inside the unit circle. Common practice (cut = inverse of boost).
BiquadCoeffs inverse(const BiquadCoeffs& c) noexcept;

/// True when the section's poles lie strictly inside the unit circle (Jury's conditions for a
/// second-order polynomial, common practice).
bool isStable(const BiquadCoeffs& c) noexcept;

/// Constrained, iteratively reweighted least-squares fit of a biquad's squared magnitude to
/// target(w) (w in radians per sample): exact at DC and at omega0, least relative error on
/// 24 log-spaced points from omega0/8 to omegaMax. The fit is linear in the Vicanek (2016)
/// coefficients (B0, B1, B2, A1, A2) (equation error, reweighted by 1/(T*A) after the
/// first pass as in K. Steiglitz and L. E. McBride, IEEE Trans. AC 10(4), 1965); the result
/// is spectrally factored. Returns false (out untouched) if the fit is not realisable as
/// a stable section.
template <typename Target>
bool fitMagnitudeSquared(const Target& target, double omega0, double omegaMax,
                         BiquadCoeffs& out) noexcept
{
    constexpr int kPoints = 24;
    constexpr int kPasses = 3;
    auto phis = [](double w, double& p0, double& p1, double& p2)
    {
        const double s = std::sin(0.5 * w);
        p1 = s * s;
        p0 = 1.0 - p1;
        p2 = 4.0 * p0 * p1;
    };
    // Rows: B0 p0 + B1 p1 + B2 p2 - T (A1 p1 + A2 p2) = T p0  (A0 normalised to 1).
    Eigen::Matrix<double, kPoints, 5> rows;
    Eigen::Matrix<double, kPoints, 1> rhs, t, p0s, p1s, p2s;
    const double lo = omega0 / 8.0;
    for (int i = 0; i < kPoints; ++i)
    {
        const double w = lo * std::pow(omegaMax / lo, static_cast<double>(i) / (kPoints - 1));
        double p0, p1, p2;
        phis(w, p0, p1, p2);
        const double ti = target(w);
        rows.row(i) << p0, p1, p2, -ti * p1, -ti * p2;
        rhs(i) = ti * p0;
        t(i) = ti;
        p0s(i) = p0;
        p1s(i) = p1;
        p2s(i) = p2;
    }
    Eigen::Matrix<double, 2, 5> cons;
    Eigen::Vector2d consRhs;
    {
        const double tDc = target(0.0);
        cons.row(0) << 1.0, 0.0, 0.0, 0.0, 0.0;
        consRhs(0) = tDc;
        double p0, p1, p2;
        phis(omega0, p0, p1, p2);
        const double t0 = target(omega0);
        cons.row(1) << p0, p1, p2, -t0 * p1, -t0 * p2;
        consRhs(1) = t0 * p0;
    }
    Eigen::Matrix<double, kPoints, 1> weight = t.cwiseInverse();
    Eigen::Matrix<double, 5, 1> x = Eigen::Matrix<double, 5, 1>::Zero();
    for (int pass = 0; pass < kPasses; ++pass)
    {
        const Eigen::Matrix<double, kPoints, 5> rw = weight.asDiagonal() * rows;
        const Eigen::Matrix<double, kPoints, 1> bw = weight.cwiseProduct(rhs);
        Eigen::Matrix<double, 7, 7> kkt = Eigen::Matrix<double, 7, 7>::Zero();
        kkt.topLeftCorner<5, 5>() = rw.transpose() * rw;
        kkt.topRightCorner<5, 2>() = cons.transpose();
        kkt.bottomLeftCorner<2, 5>() = cons;
        Eigen::Matrix<double, 7, 1> k;
        k.head<5>() = rw.transpose() * bw;
        k.tail<2>() = consRhs;
        x = kkt.fullPivLu().solve(k).head<5>();
        const Eigen::Matrix<double, kPoints, 1> aPrev = p0s + x(3) * p1s + x(4) * p2s;
        // Weights enter squared, so |A| serves while an intermediate pass is not yet a valid
        // |A|^2; the final result is checked for realisability and stability below.
        weight = t.cwiseProduct(aPrev.cwiseAbs().cwiseMax(1.0e-300)).cwiseInverse();
    }
    double b[3], a[3];
    if (!factor(x(0), x(1), x(2), b) || !factor(1.0, x(3), x(4), a) || a[0] == 0.0)
        return false;
    BiquadCoeffs c{b[0] / a[0], b[1] / a[0], b[2] / a[0], a[1] / a[0], a[2] / a[0]};
    if (!isStable(c) || !std::isfinite(c.b0) || !std::isfinite(c.b1) || !std::isfinite(c.b2))
        return false;
    out = c;
    return true;
}

} // namespace kerf::dsp::matched
