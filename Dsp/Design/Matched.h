#pragma once
// Building blocks of the `accurate` designs: matched poles, magnitude-matched numerators and
// a constrained magnitude-squared fit. Pure functions, no allocation.
#include "Biquad.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>
#include <utility>

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

/// sin x for 0 <= x <= pi/2 from its Taylor series to x^23 (truncation below 1e-20 there;
/// common practice), nested as 1 - x^2/(2k (2k + 1)) (...); the library's sin elsewhere.
inline double sinUpToHalfPi(double x) noexcept
{
    if (!(x >= 0.0 && x <= 1.5707963267948966))
        return std::sin(x);
    constexpr auto inverse = []
    {
        std::array<double, 12> a{};
        for (int k = 1; k < 12; ++k)
            a[static_cast<std::size_t>(k)] = 1.0 / ((2.0 * k) * (2.0 * k + 1.0));
        return a;
    }();
    const double x2 = x * x;
    double s = 1.0;
    for (int k = 11; k >= 1; --k)
        s = 1.0 - x2 * inverse[static_cast<std::size_t>(k)] * s;
    return x * s;
}

/// Solves a x = b in place for a small dense system (Gaussian elimination with partial
/// pivoting, common practice); false when a pivot vanishes. The solution replaces b.
template <int N> bool solveSmall(double (&a)[N][N], double (&b)[N]) noexcept
{
    double inverse[N]; // of each pivot
    for (int col = 0; col < N; ++col)
    {
        int pivot = col;
        for (int row = col + 1; row < N; ++row)
            if (std::abs(a[row][col]) > std::abs(a[pivot][col]))
                pivot = row;
        if (!(std::abs(a[pivot][col]) > 0.0))
            return false;
        if (pivot != col)
        {
            for (int k = 0; k < N; ++k)
                std::swap(a[col][k], a[pivot][k]);
            std::swap(b[col], b[pivot]);
        }
        inverse[col] = 1.0 / a[col][col];
        for (int row = col + 1; row < N; ++row)
        {
            const double f = a[row][col] * inverse[col];
            for (int k = col; k < N; ++k)
                a[row][k] -= f * a[col][k];
            b[row] -= f * b[col];
        }
    }
    for (int row = N - 1; row >= 0; --row)
    {
        double v = b[row];
        for (int k = row + 1; k < N; ++k)
            v -= a[row][k] * b[k];
        b[row] = v * inverse[row];
    }
    return true;
}

/// Constrained, iteratively reweighted least-squares fit of a biquad's squared magnitude to
/// target(w) (w in radians per sample): exact at DC and at omega0, least relative error on
/// 24 log-spaced points from omega0/8 to omegaMax. The fit is linear in the Vicanek (2016)
/// coefficients (B0, B1, B2, A1, A2) (equation error, reweighted by 1/(T*A) after the
/// first pass as in K. Steiglitz and L. E. McBride, IEEE Trans. AC 10(4), 1965); the result
/// is spectrally factored. Returns false (out untouched) if the fit is not realisable as
/// a stable section. The DC constraint fixes B0 = T(0); the other four unknowns solve the
/// weighted normal equations bordered by the constraint at omega0 (Lagrange multiplier).
template <typename Target>
bool fitMagnitudeSquared(const Target& target, double omega0, double omegaMax,
                         BiquadCoeffs& out) noexcept
{
    constexpr int kPoints = 24;
    constexpr int kPasses = 3;
    auto phis = [](double w, double& p0, double& p1, double& p2)
    {
        const double s = sinUpToHalfPi(0.5 * w); // w <= 0.98 pi (kMaxDesignFraction)
        p1 = s * s;
        p0 = 1.0 - p1;
        p2 = 4.0 * p0 * p1;
    };
    // Rows: B0 p0 + B1 p1 + B2 p2 - T (A1 p1 + A2 p2) = T p0  (A0 normalised to 1); with
    // B0 = T(0) known: [p1, p2, -T p1, -T p2] . (B1, B2, A1, A2) = p0 (T - T(0)).
    const double tDc = target(0.0);
    double rows[kPoints][4], rhs[kPoints], t[kPoints], p0s[kPoints], p1s[kPoints], p2s[kPoints];
    const double lo = omega0 / 8.0;
    const double ratio = std::pow(omegaMax / lo, 1.0 / (kPoints - 1));
    double w = lo;
    for (int i = 0; i < kPoints; ++i, w *= ratio)
    {
        if (i == kPoints - 1)
            w = omegaMax;
        double p0, p1, p2;
        phis(w, p0, p1, p2);
        const double ti = target(w);
        rows[i][0] = p1;
        rows[i][1] = p2;
        rows[i][2] = -ti * p1;
        rows[i][3] = -ti * p2;
        rhs[i] = p0 * (ti - tDc);
        t[i] = ti;
        p0s[i] = p0;
        p1s[i] = p1;
        p2s[i] = p2;
    }
    double cons[4], consRhs;
    {
        double p0, p1, p2;
        phis(omega0, p0, p1, p2);
        const double t0 = target(omega0);
        cons[0] = p1;
        cons[1] = p2;
        cons[2] = -t0 * p1;
        cons[3] = -t0 * p2;
        consRhs = p0 * (t0 - tDc);
    }
    double weight[kPoints];
    for (int i = 0; i < kPoints; ++i)
        weight[i] = 1.0 / t[i];
    double x[5] = {tDc, 0.0, 0.0, 0.0, 0.0};
    for (int pass = 0; pass < kPasses; ++pass)
    {
        // The full 4 x 4 block (symmetric; rows of four vectorise).
        double normal[4][4] = {}, k[5] = {};
        for (int i = 0; i < kPoints; ++i)
        {
            const double w2 = weight[i] * weight[i];
            for (int r = 0; r < 4; ++r)
            {
                const double wr = w2 * rows[i][r];
                for (int c = 0; c < 4; ++c)
                    normal[r][c] += wr * rows[i][c];
                k[r] += wr * rhs[i];
            }
        }
        double kkt[5][5];
        for (int r = 0; r < 4; ++r)
        {
            for (int c = 0; c < 4; ++c)
                kkt[r][c] = normal[r][c];
            kkt[r][4] = kkt[4][r] = cons[r];
        }
        kkt[4][4] = 0.0;
        k[4] = consRhs;
        if (!solveSmall(kkt, k))
            return false;
        for (int m = 0; m < 4; ++m)
            x[m + 1] = k[m];
        // Weights enter squared, so |A| serves while an intermediate pass is not yet a valid
        // |A|^2; the final result is checked for realisability and stability below.
        for (int i = 0; i < kPoints; ++i)
        {
            const double aPrev = p0s[i] + x[3] * p1s[i] + x[4] * p2s[i];
            weight[i] = 1.0 / (t[i] * std::max(std::abs(aPrev), 1.0e-300));
        }
    }
    double b[3], a[3];
    if (!factor(x[0], x[1], x[2], b) || !factor(1.0, x[3], x[4], a) || a[0] == 0.0)
        return false;
    BiquadCoeffs c{b[0] / a[0], b[1] / a[0], b[2] / a[0], a[1] / a[0], a[2] / a[0]};
    if (!isStable(c) || !std::isfinite(c.b0) || !std::isfinite(c.b1) || !std::isfinite(c.b2))
        return false;
    out = c;
    return true;
}

} // namespace kerf::dsp::matched
