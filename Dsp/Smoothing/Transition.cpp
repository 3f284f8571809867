#include "Transition.h"

#include "../Chain.h"

#include <algorithm>
#include <cmath>

#if defined(__x86_64__)
#include <immintrin.h>
#endif

namespace kerf::dsp
{

int transitionSamples(double glideMs, double sampleRateHz) noexcept
{
    const double ms = std::clamp(std::isfinite(glideMs) ? glideMs : kDefaultGlideMs,
                                 kMinTransitionMs, kMaxGlideMs);
    const int n = static_cast<int>(std::ceil(ms * 1e-3 * sampleRateHz));
    const int k = kUpdateIntervalSamples;
    return std::max(k, (n + k - 1) / k * k);
}

SvfNatural toNatural(const SvfCoeffs& c) noexcept
{
    SvfNatural n;
    n.logG = std::log(std::max(c.g, 1e-300));
    n.logK = std::log(std::max(c.k, 1e-300));
    n.mHigh = c.mHigh;
    n.mBand = c.mBand;
    n.mLow = c.mLow;
    return n;
}

namespace
{
double blendGain(double a, double b, double s) noexcept
{
    if ((a > 0.0 && b > 0.0) || (a < 0.0 && b < 0.0))
    {
        // dB-linear: |a|^(1 - s) |b|^s with the shared sign.
        const double mag = std::exp((1.0 - s) * std::log(std::abs(a)) + s * std::log(std::abs(b)));
        return a > 0.0 ? mag : -mag;
    }
    return a + s * (b - a);
}
} // namespace

SvfNatural blend(const SvfNatural& a, const SvfNatural& b, double s) noexcept
{
    SvfNatural n;
    n.logG = a.logG + s * (b.logG - a.logG);
    n.logK = a.logK + s * (b.logK - a.logK);
    n.mHigh = blendGain(a.mHigh, b.mHigh, s);
    n.mBand = a.mBand + s * (b.mBand - a.mBand);
    n.mLow = blendGain(a.mLow, b.mLow, s);
    return n;
}

SvfCoeffs fromNatural(const SvfNatural& n) noexcept
{
    SvfCoeffs c;
    c.g = std::exp(n.logG);
    c.k = std::exp(n.logK);
    c.mHigh = n.mHigh;
    c.mBand = n.mBand;
    c.mLow = n.mLow;
    c.updateDerived();
    return c;
}

namespace
{
bool sameSign(double a, double b) noexcept
{
    return (a > 0.0 && b > 0.0) || (a < 0.0 && b < 0.0);
}
} // namespace

GlidePath::GlidePath(const SvfNatural& a, const SvfNatural& b) noexcept : from(a), to(b)
{
    logHigh = sameSign(a.mHigh, b.mHigh);
    if (logHigh)
    {
        logHigh0 = std::log(std::abs(a.mHigh));
        logHighStep = std::log(std::abs(b.mHigh)) - logHigh0;
        signHigh = a.mHigh > 0.0 ? 1.0 : -1.0;
    }
    logLow = sameSign(a.mLow, b.mLow);
    if (logLow)
    {
        logLow0 = std::log(std::abs(a.mLow));
        logLowStep = std::log(std::abs(b.mLow)) - logLow0;
        signLow = a.mLow > 0.0 ? 1.0 : -1.0;
    }
}

GlidePath::GlidePath(const SvfNatural& a, const SvfNatural& b, const SvfNatural& velocity) noexcept
    : GlidePath(a, b)
{
    bendG = velocity.logG;
    bendK = velocity.logK;
    // A weight in dB moves by d(log |m|)/dt = m'/m (a is not zero there: it shares b's sign).
    bendHigh = logHigh ? velocity.mHigh / a.mHigh : velocity.mHigh;
    bendBand = velocity.mBand;
    bendLow = logLow ? velocity.mLow / a.mLow : velocity.mLow;
}

namespace
{
/// Where a path is at time fraction t, before the exponentials: for each quantity its value
/// in the path's coordinates and its rate d/dt (x(t) = x0 + step s(t) + bend B(t), so
/// x'(t) = step s'(t) + bend B'(t)). The high and low weights either move in dB (db*: the
/// weight is sign e^arg) or linearly (lin*, also a weight that does not move).
struct PathPoint
{
    double argG, rateG, argK, rateK;
    double argH, rateH, linH, linHs;
    double argL, rateL, linL, linLs;
    double band, bandS;
    bool dbH, dbL;
};

PathPoint pathPoint(const GlidePath& p, double t) noexcept
{
    const double tc = std::clamp(t, 0.0, 1.0);
    const double s = transitionCurve(tc), ds = transitionSlope(tc);
    const double b = bendCurve(tc), db = bendSlope(tc);
    PathPoint q{};
    auto move = [&](double x0, double step, double bend, double& x, double& rate)
    {
        x = x0 + s * step + b * bend;
        rate = ds * step + db * bend;
    };
    move(p.from.logG, p.to.logG - p.from.logG, p.bendG, q.argG, q.rateG);
    move(p.from.logK, p.to.logK - p.from.logK, p.bendK, q.argK, q.rateK);
    auto weight = [&](double from, double to, bool log, double l0, double step, double bend,
                      bool& db, double& arg, double& rate, double& lin, double& linS)
    {
        db = false;
        arg = rate = 0.0;
        lin = from;
        linS = 0.0;
        if (from == to && bend == 0.0)
            return; // a weight that does not move (a peaking section's 1) costs nothing
        if (log)
        {
            db = true;
            move(l0, step, bend, arg, rate);
        }
        else
            move(from, to - from, bend, lin, linS);
    };
    weight(p.from.mHigh, p.to.mHigh, p.logHigh, p.logHigh0, p.logHighStep, p.bendHigh, q.dbH,
           q.argH, q.rateH, q.linH, q.linHs);
    weight(p.from.mLow, p.to.mLow, p.logLow, p.logLow0, p.logLowStep, p.bendLow, q.dbL, q.argL,
           q.rateL, q.linL, q.linLs);
    move(p.from.mBand, p.to.mBand - p.from.mBand, p.bendBand, q.band, q.bandS);
    // At the ends exactly the end points (from + (to - from) need not round to to).
    if (t >= 1.0)
        q.band = p.to.mBand;
    else if (t <= 0.0)
        q.band = p.from.mBand;
    return q;
}

/// The folding of everything as the kernels fold it, given g, k, a1, the weights and their
/// derivatives along t.
void fold(double g, double gs, double k, double ks, double a1, double a1s, double mh, double mhs,
          double mb, double mbs, double ml, double mls, double value[6], double slope[6]) noexcept
{
    value[0] = a1;
    value[1] = g * a1;
    value[2] = g;
    value[3] = mh;
    value[4] = mb - mh * k;
    value[5] = ml - mh;
    slope[0] = a1s;
    slope[1] = gs * a1 + g * a1s;
    slope[2] = gs;
    slope[3] = mhs;
    slope[4] = mbs - mhs * k - mh * ks;
    slope[5] = mls - mhs;
}
} // namespace

SvfNatural GlidePath::at(double t) const noexcept
{
    if (t <= 0.0)
        return from;
    if (t >= 1.0)
        return to;
    const PathPoint q = pathPoint(*this, t);
    SvfNatural n;
    n.logG = q.argG;
    n.logK = q.argK;
    n.mHigh = q.dbH ? signHigh * std::exp(q.argH) : q.linH;
    n.mBand = q.band;
    n.mLow = q.dbL ? signLow * std::exp(q.argL) : q.linL;
    return n;
}

SvfNatural GlidePath::velocityAt(double t) const noexcept
{
    const PathPoint q = pathPoint(*this, t);
    SvfNatural v;
    v.logG = q.rateG;
    v.logK = q.rateK;
    v.mHigh = q.dbH ? signHigh * std::exp(q.argH) * q.rateH : q.linHs;
    v.mBand = q.bandS;
    v.mLow = q.dbL ? signLow * std::exp(q.argL) * q.rateL : q.linLs;
    return v;
}

SvfCoeffs GlidePath::coeffsAt(double t) const noexcept
{
    return fromNatural(at(t));
}

namespace
{
#if defined(__x86_64__) && defined(__GNUC__)
/// e^x for four values (|x| < 700): x = n ln 2 + r with |r| <= ln 2 / 2 (Cody and Waite's
/// two-part ln 2, fdlibm's constants, from memory), e^r by its Taylor series to r^12
/// (truncation below 7e-15 relative), times 2^n built in the exponent bits.
__attribute__((target("avx,fma"))) __m256d exp4(__m256d x) noexcept
{
    const __m256d n = _mm256_round_pd(_mm256_mul_pd(x, _mm256_set1_pd(1.4426950408889634)),
                                      _MM_FROUND_TO_NEAREST_INT | _MM_FROUND_NO_EXC);
    __m256d r = _mm256_fnmadd_pd(n, _mm256_set1_pd(6.93147180369123816490e-01), x);
    r = _mm256_fnmadd_pd(n, _mm256_set1_pd(1.90821492927058770002e-10), r);
    __m256d p = _mm256_set1_pd(1.0 / 479001600.0); // 1/12!
    const double inv[12] = {
        1.0 / 39916800.0, 1.0 / 3628800.0, 1.0 / 362880.0, 1.0 / 40320.0, 1.0 / 5040.0, 1.0 / 720.0,
        1.0 / 120.0,      1.0 / 24.0,      1.0 / 6.0,      0.5,           1.0,          1.0};
    for (double c : inv)
        p = _mm256_fmadd_pd(p, r, _mm256_set1_pd(c));
    const __m128i ni = _mm256_cvtpd_epi32(n);
    const __m128i bias = _mm_set1_epi64x(1023);
    const __m128i lo = _mm_slli_epi64(_mm_add_epi64(_mm_cvtepi32_epi64(ni), bias), 52);
    const __m128i hi =
        _mm_slli_epi64(_mm_add_epi64(_mm_cvtepi32_epi64(_mm_unpackhi_epi64(ni, ni)), bias), 52);
    const __m256d scale =
        _mm256_insertf128_pd(_mm256_castpd128_pd256(_mm_castsi128_pd(lo)), _mm_castsi128_pd(hi), 1);
    return _mm256_mul_pd(p, scale);
}

/// A weight as fold takes it, four lanes at once: linear (or still) lanes as pathPoint gave
/// them, lanes marked in `db` (sign bit set) sign e^arg with slope sign e^arg rate.
__attribute__((target("avx,fma"))) inline void
weight4(bool any, const double* arg, const double* rate, const double* lin, const double* linS,
        const double* sign, const double* db, __m256d& w, __m256d& ws) noexcept
{
    w = _mm256_load_pd(lin);
    ws = _mm256_load_pd(linS);
    if (!any)
        return;
    const __m256d wDb = _mm256_mul_pd(_mm256_load_pd(sign), exp4(_mm256_load_pd(arg)));
    const __m256d mask = _mm256_load_pd(db);
    w = _mm256_blendv_pd(w, wDb, mask);
    ws = _mm256_blendv_pd(ws, _mm256_mul_pd(wDb, _mm256_load_pd(rate)), mask);
}

__attribute__((target("avx,fma"))) void foldedAt4(const GlidePath* const* paths, const double* t,
                                                  int count, double (*value)[6],
                                                  double (*slope)[6]) noexcept
{
    // Each lane's point before the exponentials (pathPoint, scalar), then the exponentials,
    // the division and the fold of all four lanes in one vector each.
    alignas(32) double argG[4], rateG[4], argK[4], rateK[4], argH[4], rateH[4], linH[4], linHs[4],
        signH[4], dbH[4], argL[4], rateL[4], linL[4], linLs[4], signL[4], dbL[4], band[4], bandS[4];
    bool anyHigh = false, anyLow = false;
    for (int i = 0; i < 4; ++i)
    {
        const GlidePath& p = *paths[i < count ? i : 0];
        const PathPoint q = pathPoint(p, t[i < count ? i : 0]);
        argG[i] = q.argG;
        rateG[i] = q.rateG;
        argK[i] = q.argK;
        rateK[i] = q.rateK;
        argH[i] = q.argH;
        rateH[i] = q.rateH;
        linH[i] = q.linH;
        linHs[i] = q.linHs;
        signH[i] = p.signHigh;
        dbH[i] = q.dbH ? -1.0 : 0.0; // sign bit set (blendv) where the weight moves in dB
        argL[i] = q.argL;
        rateL[i] = q.rateL;
        linL[i] = q.linL;
        linLs[i] = q.linLs;
        signL[i] = p.signLow;
        dbL[i] = q.dbL ? -1.0 : 0.0;
        band[i] = q.band;
        bandS[i] = q.bandS;
        anyHigh = anyHigh || q.dbH;
        anyLow = anyLow || q.dbL;
    }
    __m256d mh, mhs, ml, mls;
    weight4(anyHigh, argH, rateH, linH, linHs, signH, dbH, mh, mhs);
    weight4(anyLow, argL, rateL, linL, linLs, signL, dbL, ml, mls);
    const __m256d g = exp4(_mm256_load_pd(argG));
    const __m256d k = exp4(_mm256_load_pd(argK));
    const __m256d gs = _mm256_mul_pd(g, _mm256_load_pd(rateG)),
                  ks = _mm256_mul_pd(k, _mm256_load_pd(rateK));
    const __m256d one = _mm256_set1_pd(1.0);
    const __m256d a1 = _mm256_div_pd(one, _mm256_fmadd_pd(g, _mm256_add_pd(g, k), one));
    // a1' = -a1^2 (2 g g' + g' k + g k')
    const __m256d inner =
        _mm256_fmadd_pd(g, ks, _mm256_mul_pd(gs, _mm256_add_pd(_mm256_add_pd(g, g), k)));
    const __m256d a1s =
        _mm256_mul_pd(_mm256_sub_pd(_mm256_setzero_pd(), _mm256_mul_pd(a1, a1)), inner);
    const __m256d mb = _mm256_load_pd(band), mbs = _mm256_load_pd(bandS);
    const __m256d v[6] = {a1, _mm256_mul_pd(g, a1),        g,
                          mh, _mm256_fnmadd_pd(mh, k, mb), _mm256_sub_pd(ml, mh)};
    const __m256d d[6] = {
        a1s, _mm256_fmadd_pd(gs, a1, _mm256_mul_pd(g, a1s)),          gs,
        mhs, _mm256_fnmadd_pd(mh, ks, _mm256_fnmadd_pd(mhs, k, mbs)), _mm256_sub_pd(mls, mhs)};
    alignas(32) double vt[6][4], dt[6][4];
    for (int m = 0; m < 6; ++m)
    {
        _mm256_store_pd(vt[m], v[m]);
        _mm256_store_pd(dt[m], d[m]);
    }
    for (int i = 0; i < count; ++i)
        for (int m = 0; m < 6; ++m)
        {
            value[i][m] = vt[m][i];
            slope[i][m] = dt[m][i];
        }
}

bool hasAvxFma() noexcept
{
    static const bool yes = __builtin_cpu_supports("avx") && __builtin_cpu_supports("fma");
    return yes;
}
#endif
} // namespace

void GlidePath::foldedAt(double t, double value[6], double slope[6]) const noexcept
{
    // g, k and a1 = 1 / (1 + g (g + k)) with their derivatives along t (chain rule), then
    // the weights and the fold as the kernels fold them.
    const PathPoint q = pathPoint(*this, t);
    const double g = std::exp(q.argG), gs = g * q.rateG;
    const double k = std::exp(q.argK), ks = k * q.rateK;
    const double a1 = 1.0 / (1.0 + g * (g + k));
    const double a1s = -a1 * a1 * (2.0 * g * gs + gs * k + g * ks);
    double mh = q.linH, mhs = q.linHs, ml = q.linL, mls = q.linLs;
    if (q.dbH)
    {
        mh = signHigh * std::exp(q.argH);
        mhs = mh * q.rateH;
    }
    if (q.dbL)
    {
        ml = signLow * std::exp(q.argL);
        mls = ml * q.rateL;
    }
    fold(g, gs, k, ks, a1, a1s, mh, mhs, q.band, q.bandS, ml, mls, value, slope);
}

void foldedAtBatch(const GlidePath* const* paths, const double* t, int count, double (*value)[6],
                   double (*slope)[6]) noexcept
{
#if defined(__x86_64__) && defined(__GNUC__)
    if (count > 0 && hasAvxFma())
    {
        foldedAt4(paths, t, std::min(count, 4), value, slope);
        return;
    }
#endif
    for (int i = 0; i < std::min(count, 4); ++i)
        paths[i]->foldedAt(t[i], value[i], slope[i]);
}

bool sectionsCanGlide(const StageSpec& a, const StageSpec& b) noexcept
{
    if (!a.enabled || !b.enabled || !isSectionType(a.type) || a.type != b.type ||
        a.order != b.order || a.alignment != b.alignment || a.channels != b.channels ||
        a.design != b.design)
        return false;
    // An order-2 pass switching between its alignment's own Q (q = 0) and a resonant corner.
    if ((a.q == 0.0) != (b.q == 0.0))
        return false;
    // Gain-carrying types designed at 0 dB collapse to the identity, whose realised poles say
    // nothing about the settings: leaving or reaching 0 dB crossfades.
    const bool carriesGain = a.type == StageType::peaking || a.type == StageType::lowShelf ||
                             a.type == StageType::highShelf || a.type == StageType::tilt;
    if (carriesGain && (a.gainDb == 0.0) != (b.gainDb == 0.0))
        return false;
    const double octaves = std::abs(std::log2(std::max(a.freqHz, 1e-3) / std::max(b.freqHz, 1e-3)));
    const double qRatio = (a.q > 0.0 && b.q > 0.0) ? std::abs(std::log2(a.q / b.q)) : 0.0;
    const double slopeRatio =
        (a.slope > 0.0 && b.slope > 0.0) ? std::abs(std::log2(a.slope / b.slope)) : 0.0;
    return octaves <= 1.0 && std::abs(a.gainDb - b.gainDb) <= 12.0 && qRatio <= 1.0 &&
           slopeRatio <= 1.0;
}

} // namespace kerf::dsp
