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

SvfNatural GlidePath::at(double s) const noexcept
{
    if (s <= 0.0)
        return from;
    if (s >= 1.0)
        return to;
    SvfNatural n;
    n.logG = from.logG + s * (to.logG - from.logG);
    n.logK = from.logK + s * (to.logK - from.logK);
    // A weight that does not move (a peaking section's, 1 at both ends) costs nothing.
    n.mHigh = from.mHigh == to.mHigh ? from.mHigh
              : logHigh              ? signHigh * std::exp(logHigh0 + s * logHighStep)
                                     : from.mHigh + s * (to.mHigh - from.mHigh);
    n.mBand = from.mBand + s * (to.mBand - from.mBand);
    n.mLow = from.mLow == to.mLow ? from.mLow
             : logLow             ? signLow * std::exp(logLow0 + s * logLowStep)
                                  : from.mLow + s * (to.mLow - from.mLow);
    return n;
}

SvfCoeffs GlidePath::coeffsAt(double s) const noexcept
{
    return fromNatural(at(s));
}

namespace
{
/// Whether the high (or low) weight moves in dB along the path: foldWithWeights then needs
/// e^(l0 + s step) for it.
bool highInDb(const GlidePath& p) noexcept
{
    return p.from.mHigh != p.to.mHigh && p.logHigh;
}
bool lowInDb(const GlidePath& p) noexcept
{
    return p.from.mLow != p.to.mLow && p.logLow;
}

/// The weights' part of foldedAt (high and low outputs: constant, in dB or linear) and the
/// folding of everything, given g, k, a1 and their derivatives, and for a weight that moves
/// in dB its magnitude e^(l0 + s step) (expHigh, expLow; unused otherwise).
void foldWithWeights(const GlidePath& p, double s, double g, double gs, double k, double ks,
                     double a1, double a1s, double expHigh, double expLow, double value[6],
                     double slope[6]) noexcept
{
    const SvfNatural& a = p.from;
    const SvfNatural& b = p.to;
    auto weight = [s](double from, double to, bool log, double sign, double e, double step,
                      double& w, double& ws)
    {
        if (from == to)
        {
            w = from;
            ws = 0.0;
        }
        else if (log)
        {
            w = sign * e;
            ws = w * step;
        }
        else
        {
            w = from + s * (to - from);
            ws = to - from;
        }
    };
    double mh, mhs, ml, mls;
    weight(a.mHigh, b.mHigh, p.logHigh, p.signHigh, expHigh, p.logHighStep, mh, mhs);
    weight(a.mLow, b.mLow, p.logLow, p.signLow, expLow, p.logLowStep, ml, mls);
    const double mb = s <= 0.0 ? a.mBand : s >= 1.0 ? b.mBand : a.mBand + s * (b.mBand - a.mBand);
    const double mbs = b.mBand - a.mBand;
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

#if defined(__x86_64__) && defined(__GNUC__)
/// e^x for four values (|x| < 700): x = n ln 2 + r with |r| <= ln 2 / 2 (Cody and Waite's
/// two-part ln 2, fdlibm's constants, from memory), e^r by its Taylor series to r^12
/// (truncation below 7e-15 relative) evaluated in Estrin's scheme (pairs of terms, then
/// pairs of pairs with r^2, r^4, r^8: four dependent steps instead of twelve; common
/// practice), times 2^n built in the exponent bits.
__attribute__((target("avx,fma"))) inline __m256d exp4(__m256d x) noexcept
{
    const __m256d n = _mm256_round_pd(_mm256_mul_pd(x, _mm256_set1_pd(1.4426950408889634)),
                                      _MM_FROUND_TO_NEAREST_INT | _MM_FROUND_NO_EXC);
    __m256d r = _mm256_fnmadd_pd(n, _mm256_set1_pd(6.93147180369123816490e-01), x);
    r = _mm256_fnmadd_pd(n, _mm256_set1_pd(1.90821492927058770002e-10), r);
    const __m256d r2 = _mm256_mul_pd(r, r), r4 = _mm256_mul_pd(r2, r2), r8 = _mm256_mul_pd(r4, r4);
    // Terms 2k and 2k + 1: 1/(2k)! + r/(2k + 1)!
    const __m256d p01 = _mm256_add_pd(r, _mm256_set1_pd(1.0));
    const __m256d p23 = _mm256_fmadd_pd(r, _mm256_set1_pd(1.0 / 6.0), _mm256_set1_pd(0.5));
    const __m256d p45 = _mm256_fmadd_pd(r, _mm256_set1_pd(1.0 / 120.0), _mm256_set1_pd(1.0 / 24.0));
    const __m256d p67 =
        _mm256_fmadd_pd(r, _mm256_set1_pd(1.0 / 5040.0), _mm256_set1_pd(1.0 / 720.0));
    const __m256d p89 =
        _mm256_fmadd_pd(r, _mm256_set1_pd(1.0 / 362880.0), _mm256_set1_pd(1.0 / 40320.0));
    const __m256d p1011 =
        _mm256_fmadd_pd(r, _mm256_set1_pd(1.0 / 39916800.0), _mm256_set1_pd(1.0 / 3628800.0));
    const __m256d p12 = _mm256_set1_pd(1.0 / 479001600.0);
    const __m256d q0 = _mm256_fmadd_pd(p23, r2, p01), q1 = _mm256_fmadd_pd(p67, r2, p45);
    const __m256d q2 = _mm256_fmadd_pd(p1011, r2, p89);
    const __m256d w0 = _mm256_fmadd_pd(q1, r4, q0), w1 = _mm256_fmadd_pd(p12, r4, q2);
    const __m256d p = _mm256_fmadd_pd(w1, r8, w0);
    const __m128i ni = _mm256_cvtpd_epi32(n);
    const __m128i bias = _mm_set1_epi64x(1023);
    const __m128i lo = _mm_slli_epi64(_mm_add_epi64(_mm_cvtepi32_epi64(ni), bias), 52);
    const __m128i hi =
        _mm_slli_epi64(_mm_add_epi64(_mm_cvtepi32_epi64(_mm_unpackhi_epi64(ni, ni)), bias), 52);
    const __m256d scale =
        _mm256_insertf128_pd(_mm256_castpd128_pd256(_mm_castsi128_pd(lo)), _mm_castsi128_pd(hi), 1);
    return _mm256_mul_pd(p, scale);
}

/// A field of four paths in the lanes of one vector (register moves only).
template <typename Field>
__attribute__((target("avx,fma"))) inline __m256d lanes4(const GlidePath* const* p,
                                                         Field field) noexcept
{
    return _mm256_set_pd(field(*p[3]), field(*p[2]), field(*p[1]), field(*p[0]));
}

/// A weight as foldWithWeights takes it, four lanes at once: linearly (a weight that does
/// not move is its own linear path, exactly) or, in the lanes where it moves in dB (`moves`),
/// sign e^(l0 + s step). `any`: some lane moves in dB.
template <typename Moves, typename From, typename To, typename Sign, typename L0, typename Step>
__attribute__((target("avx,fma"))) inline void
weight4(const GlidePath* const* p, __m256d sv4, bool any, Moves moves, From from, To to, Sign sign,
        L0 l0, Step step, __m256d& w, __m256d& ws) noexcept
{
    const __m256d f = lanes4(p, from);
    const __m256d linStep = _mm256_sub_pd(lanes4(p, to), f);
    w = _mm256_fmadd_pd(sv4, linStep, f);
    ws = linStep;
    if (!any)
        return;
    const __m256d dbStep = lanes4(p, [&](const GlidePath& q) { return moves(q) ? step(q) : 0.0; });
    const __m256d e = exp4(_mm256_fmadd_pd(
        sv4, dbStep, lanes4(p, [&](const GlidePath& q) { return moves(q) ? l0(q) : 0.0; })));
    const __m256d wDb = _mm256_mul_pd(lanes4(p, sign), e);
    // sign bit set (blendv) where the weight moves in dB
    const __m256d mask = lanes4(p, [&](const GlidePath& q) { return moves(q) ? -1.0 : 0.0; });
    w = _mm256_blendv_pd(w, wDb, mask);
    ws = _mm256_blendv_pd(ws, _mm256_mul_pd(wDb, dbStep), mask);
}

/// Six vectors of four lanes (value m of path i in lane i of x[m]) as rows, a path per row
/// `stride` doubles apart: values 0-3 by a 4 x 4 transpose, 4-5 by a 2 x 4 one.
__attribute__((target("avx,fma"))) inline void storeRows(const __m256d* x, int count, int stride,
                                                         double* out) noexcept
{
    const __m256d t0 = _mm256_unpacklo_pd(x[0], x[1]), t1 = _mm256_unpackhi_pd(x[0], x[1]);
    const __m256d t2 = _mm256_unpacklo_pd(x[2], x[3]), t3 = _mm256_unpackhi_pd(x[2], x[3]);
    const __m256d r[4] = {
        _mm256_permute2f128_pd(t0, t2, 0x20), _mm256_permute2f128_pd(t1, t3, 0x20),
        _mm256_permute2f128_pd(t0, t2, 0x31), _mm256_permute2f128_pd(t1, t3, 0x31)};
    const __m256d u0 = _mm256_unpacklo_pd(x[4], x[5]), u1 = _mm256_unpackhi_pd(x[4], x[5]);
    const __m128d e[4] = {_mm256_castpd256_pd128(u0), _mm256_castpd256_pd128(u1),
                          _mm256_extractf128_pd(u0, 1), _mm256_extractf128_pd(u1, 1)};
    for (int i = 0; i < count; ++i)
    {
        _mm256_storeu_pd(out + i * stride, r[i]);
        _mm_storeu_pd(out + i * stride + 4, e[i]);
    }
}

/// The core of foldedAt for four paths (p[i] in lane i) at positions sv4 (in [0, 1]): the
/// folded values v[m] and their slopes d[m], lane by lane. anyHigh / anyLow: some path's
/// high / low weight moves in dB.
__attribute__((target("avx,fma"), always_inline)) inline void foldedCore4(const GlidePath* const* p,
                                                                          __m256d sv4, bool anyHigh,
                                                                          bool anyLow, __m256d* v,
                                                                          __m256d* d) noexcept
{
    const __m256d zero = _mm256_setzero_pd(), one = _mm256_set1_pd(1.0);
    __m256d mh, mhs, ml, mls;
    weight4(
        p, sv4, anyHigh, [](const GlidePath& q) { return highInDb(q); },
        [](const GlidePath& q) { return q.from.mHigh; },
        [](const GlidePath& q) { return q.to.mHigh; },
        [](const GlidePath& q) { return q.signHigh; },
        [](const GlidePath& q) { return q.logHigh0; },
        [](const GlidePath& q) { return q.logHighStep; }, mh, mhs);
    weight4(
        p, sv4, anyLow, [](const GlidePath& q) { return lowInDb(q); },
        [](const GlidePath& q) { return q.from.mLow; },
        [](const GlidePath& q) { return q.to.mLow; }, [](const GlidePath& q) { return q.signLow; },
        [](const GlidePath& q) { return q.logLow0; },
        [](const GlidePath& q) { return q.logLowStep; }, ml, mls);
    const __m256d lg = lanes4(p, [](const GlidePath& q) { return q.from.logG; });
    const __m256d dg4 = _mm256_sub_pd(lanes4(p, [](const GlidePath& q) { return q.to.logG; }), lg);
    const __m256d lk = lanes4(p, [](const GlidePath& q) { return q.from.logK; });
    const __m256d dk4 = _mm256_sub_pd(lanes4(p, [](const GlidePath& q) { return q.to.logK; }), lk);
    const __m256d g = exp4(_mm256_fmadd_pd(sv4, dg4, lg));
    const __m256d k = exp4(_mm256_fmadd_pd(sv4, dk4, lk));
    const __m256d gs = _mm256_mul_pd(g, dg4), ks = _mm256_mul_pd(k, dk4);
    const __m256d a1 = _mm256_div_pd(one, _mm256_fmadd_pd(g, _mm256_add_pd(g, k), one));
    // a1' = -a1^2 (2 g g' + g' k + g k')
    const __m256d inner =
        _mm256_fmadd_pd(g, ks, _mm256_mul_pd(gs, _mm256_add_pd(_mm256_add_pd(g, g), k)));
    const __m256d a1s = _mm256_mul_pd(_mm256_sub_pd(zero, _mm256_mul_pd(a1, a1)), inner);
    const __m256d bFrom4 = lanes4(p, [](const GlidePath& q) { return q.from.mBand; });
    const __m256d bTo4 = lanes4(p, [](const GlidePath& q) { return q.to.mBand; });
    const __m256d mbs = _mm256_sub_pd(bTo4, bFrom4);
    // At s = 1 exactly the end value (from + (to - from) need not round to it).
    const __m256d mb = _mm256_blendv_pd(_mm256_fmadd_pd(sv4, mbs, bFrom4), bTo4,
                                        _mm256_cmp_pd(sv4, one, _CMP_GE_OQ));
    v[0] = a1;
    v[1] = _mm256_mul_pd(g, a1);
    v[2] = g;
    v[3] = mh;
    v[4] = _mm256_fnmadd_pd(mh, k, mb);
    v[5] = _mm256_sub_pd(ml, mh);
    d[0] = a1s;
    d[1] = _mm256_fmadd_pd(gs, a1, _mm256_mul_pd(g, a1s));
    d[2] = gs;
    d[3] = mhs;
    d[4] = _mm256_fnmadd_pd(mh, ks, _mm256_fnmadd_pd(mhs, k, mbs));
    d[5] = _mm256_sub_pd(mls, mhs);
}

/// foldedAt for four paths, one per vector lane. The paths' fields go into the lanes by
/// register moves and the results come out a path per row (`stride` doubles apart; six
/// values each) by 4 x 4 transposes, with no scalar stores read back as vectors.
__attribute__((target("avx,fma"))) void foldedAt4(const GlidePath* const* paths, const double* s,
                                                  int count, double* value, double* slope,
                                                  int stride) noexcept
{
    const GlidePath* p[4];
    double sv[4];
    bool anyHigh = false, anyLow = false;
    for (int i = 0; i < 4; ++i)
    {
        p[i] = paths[i < count ? i : 0];
        sv[i] = std::clamp(s[i < count ? i : 0], 0.0, 1.0);
        anyHigh = anyHigh || highInDb(*p[i]);
        anyLow = anyLow || lowInDb(*p[i]);
    }
    __m256d v[6], d[6];
    foldedCore4(p, _mm256_set_pd(sv[3], sv[2], sv[1], sv[0]), anyHigh, anyLow, v, d);
    // Rows: values 0-3 of path i by a 4 x 4 transpose, values 4-5 by a 2 x 4 one.
    storeRows(v, count, stride, value);
    storeRows(d, count, stride, slope);
}

/// x with its lanes moved up by one and `first` in lane 0: [first, x0, x1, x2].
__attribute__((target("avx,fma"))) inline __m256d shiftIn(__m256d x, double first) noexcept
{
    const __m256d low = _mm256_permute2f128_pd(x, x, 0x08); // [0, 0, x0, x1]
    return _mm256_blend_pd(_mm256_shuffle_pd(low, x, 0x5), _mm256_set1_pd(first), 1);
}

/// Value m of the sections whose chains start in lanes marked `fresh` (lane 0 always), zero
/// in the others.
__attribute__((target("avx,fma"))) inline __m256d startLanes(const bool* fresh, double* const* x,
                                                             int m) noexcept
{
    return _mm256_set_pd(fresh[3] ? x[3][m] : 0.0, fresh[2] ? x[2][m] : 0.0,
                         fresh[1] ? x[1][m] : 0.0, x[0][m]);
}

/// glideSegments with the knots in the lanes of one vector each.
__attribute__((target("avx,fma"), always_inline)) inline void
glideSegments4(const GlidePath* const* paths, const double* s, const double* dsdn,
               const int* length, int count, double* const* value, double* const* slope,
               double* const* cubic) noexcept
{
    auto lane = [count](const auto* x, int i) { return x[i < count ? i : count - 1]; };
    const GlidePath* p[4];
    double sv[4], kv[4], inv2[4], inv3[4], rate[4];
    bool anyHigh = false, anyLow = false;
    // Lanes that start a section's chain of intervals take its running values and slopes
    // (`fresh`), the others continue from the lane before.
    bool fresh[4];
    for (int i = 0; i < 4; ++i)
    {
        p[i] = lane(paths, i);
        anyHigh = anyHigh || highInDb(*p[i]);
        anyLow = anyLow || lowInDb(*p[i]);
        fresh[i] = i == 0 || (i < count && value[i] != value[i - 1]);
        sv[i] = std::clamp(lane(s, i), 0.0, 1.0);
        const double K = lane(length, i);
        kv[i] = K;
        inv2[i] = 1.0 / (K * K);
        inv3[i] = inv2[i] / K;
        rate[i] = lane(dsdn, i);
    }
    __m256d v[6], d[6];
    foldedCore4(p, _mm256_set_pd(sv[3], sv[2], sv[1], sv[0]), anyHigh, anyLow, v, d);
    const __m256d restart =
        _mm256_set_pd(fresh[3] ? -1.0 : 0.0, fresh[2] ? -1.0 : 0.0, fresh[1] ? -1.0 : 0.0, -1.0);
    const __m256d K4 = _mm256_set_pd(kv[3], kv[2], kv[1], kv[0]);
    const __m256d i2 = _mm256_set_pd(inv2[3], inv2[2], inv2[1], inv2[0]);
    const __m256d i3 = _mm256_set_pd(inv3[3], inv3[2], inv3[1], inv3[0]);
    const __m256d r4 = _mm256_set_pd(rate[3], rate[2], rate[1], rate[0]);
    const __m256d three = _mm256_set1_pd(3.0), two = _mm256_set1_pd(2.0);
    // The Hermite cubic of each interval, as startCubic (Chain.cpp) forms it, in separate
    // multiplies and subtractions: v(n) = b + s0 n + c2 n^2 + c3 n^3.
    __m256d power[4][6];
    for (int m = 0; m < 6; ++m)
    {
        d[m] = _mm256_mul_pd(d[m], r4); // per sample
        const __m256d b =
            _mm256_blendv_pd(shiftIn(v[m], 0.0), startLanes(fresh, value, m), restart);
        const __m256d s0 =
            _mm256_blendv_pd(shiftIn(d[m], 0.0), startLanes(fresh, slope, m), restart);
        const __m256d rise = _mm256_sub_pd(_mm256_sub_pd(v[m], b), _mm256_mul_pd(s0, K4));
        const __m256d turn = _mm256_sub_pd(d[m], s0);
        power[0][m] = b;
        power[1][m] = s0;
        power[2][m] =
            _mm256_mul_pd(_mm256_sub_pd(_mm256_mul_pd(three, rise), _mm256_mul_pd(turn, K4)), i2);
        power[3][m] =
            _mm256_mul_pd(_mm256_sub_pd(_mm256_mul_pd(turn, K4), _mm256_mul_pd(two, rise)), i3);
    }
    for (int o = 0; o < 4; ++o)
    {
        // Interval i's coefficients of n^o: a 4 x 4 and a 2 x 4 transpose, as storeRows.
        const __m256d* x = power[o];
        const __m256d t0 = _mm256_unpacklo_pd(x[0], x[1]), t1 = _mm256_unpackhi_pd(x[0], x[1]);
        const __m256d t2 = _mm256_unpacklo_pd(x[2], x[3]), t3 = _mm256_unpackhi_pd(x[2], x[3]);
        const __m256d r[4] = {
            _mm256_permute2f128_pd(t0, t2, 0x20), _mm256_permute2f128_pd(t1, t3, 0x20),
            _mm256_permute2f128_pd(t0, t2, 0x31), _mm256_permute2f128_pd(t1, t3, 0x31)};
        const __m256d u0 = _mm256_unpacklo_pd(x[4], x[5]), u1 = _mm256_unpackhi_pd(x[4], x[5]);
        const __m256d zero = _mm256_setzero_pd();
        // Values 4, 5 and the two zero lanes in one store each.
        const __m256d e[4] = {
            _mm256_permute2f128_pd(u0, zero, 0x20), _mm256_permute2f128_pd(u1, zero, 0x20),
            _mm256_permute2f128_pd(u0, zero, 0x31), _mm256_permute2f128_pd(u1, zero, 0x31)};
        for (int i = 0; i < count; ++i)
        {
            _mm256_storeu_pd(cubic[i] + 8 * o, r[i]);
            _mm256_storeu_pd(cubic[i] + 8 * o + 4, e[i]);
        }
    }
    // Each chain's last lane hands its values and slopes back to its section.
    alignas(32) double lastV[6][4], lastD[6][4];
    for (int m = 0; m < 6; ++m)
    {
        _mm256_store_pd(lastV[m], v[m]);
        _mm256_store_pd(lastD[m], d[m]);
    }
    for (int i = 0; i < count; ++i)
        if (i == count - 1 || value[i + 1] != value[i])
            for (int m = 0; m < 6; ++m)
            {
                value[i][m] = lastV[m][i];
                slope[i][m] = lastD[m][i];
            }
}

/// Up to eight intervals as two groups of four in one body, so that the processor overlaps
/// the second group's exponentials with the first group's work.
__attribute__((target("avx,fma"))) void glideSegments8(const GlidePath* const* paths,
                                                       const double* s, const double* dsdn,
                                                       const int* length, int count,
                                                       double* const* value, double* const* slope,
                                                       double* const* cubic) noexcept
{
    glideSegments4(paths, s, dsdn, length, std::min(count, 4), value, slope, cubic);
    if (count > 4)
        glideSegments4(paths + 4, s + 4, dsdn + 4, length + 4, count - 4, value + 4, slope + 4,
                       cubic + 4);
}

bool hasAvxFma() noexcept
{
    static const bool yes = __builtin_cpu_supports("avx") && __builtin_cpu_supports("fma");
    return yes;
}
#endif
} // namespace

void GlidePath::foldedAt(double s, double value[6], double slope[6]) const noexcept
{
    // g, k and a1 = 1 / (1 + g (g + k)) with their derivatives along s (chain rule), then
    // the weights and the fold as the kernels fold them.
    const double sc = std::clamp(s, 0.0, 1.0);
    const double g = std::exp(from.logG + sc * (to.logG - from.logG)),
                 gs = g * (to.logG - from.logG);
    const double k = std::exp(from.logK + sc * (to.logK - from.logK)),
                 ks = k * (to.logK - from.logK);
    const double a1 = 1.0 / (1.0 + g * (g + k));
    const double a1s = -a1 * a1 * (2.0 * g * gs + gs * k + g * ks);
    const double eh = highInDb(*this) ? std::exp(logHigh0 + sc * logHighStep) : 1.0;
    const double el = lowInDb(*this) ? std::exp(logLow0 + sc * logLowStep) : 1.0;
    foldWithWeights(*this, sc, g, gs, k, ks, a1, a1s, eh, el, value, slope);
}

void foldedAtBatch(const GlidePath* const* paths, const double* s, int count, double (*value)[6],
                   double (*slope)[6]) noexcept
{
#if defined(__x86_64__) && defined(__GNUC__)
    if (count > 0 && hasAvxFma())
    {
        foldedAt4(paths, s, std::min(count, 4), value[0], slope[0], 6);
        return;
    }
#endif
    for (int i = 0; i < std::min(count, 4); ++i)
        paths[i]->foldedAt(s[i], value[i], slope[i]);
}

void glideSegments(const GlidePath* const* paths, const double* s, const double* dsdn,
                   const int* length, int count, double* const* value, double* const* slope,
                   double* const* cubic) noexcept
{
    count = std::min(count, 8);
    if (count <= 0)
        return;
#if defined(__x86_64__) && defined(__GNUC__)
    if (hasAvxFma())
    {
        glideSegments8(paths, s, dsdn, length, count, value, slope, cubic);
        return;
    }
#endif
    for (int i = 0; i < count; ++i)
    {
        double end[6], endSlope[6];
        paths[i]->foldedAt(s[i], end, endSlope);
        const double K = length[i];
        const double inv2 = 1.0 / (K * K), inv3 = inv2 / K;
        double* v = value[i];
        double* d = slope[i];
        for (int m = 0; m < 6; ++m)
        {
            const double es = endSlope[m] * dsdn[i];
            const double rise = end[m] - v[m] - d[m] * K, turn = es - d[m];
            cubic[i][m] = v[m];
            cubic[i][8 + m] = d[m];
            cubic[i][16 + m] = (3.0 * rise - turn * K) * inv2;
            cubic[i][24 + m] = (turn * K - 2.0 * rise) * inv3;
            v[m] = end[m];
            d[m] = es;
        }
        for (int o = 0; o < 4; ++o)
            cubic[i][8 * o + 6] = cubic[i][8 * o + 7] = 0.0;
    }
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
