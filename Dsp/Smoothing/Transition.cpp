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

/// A weight as foldWithWeights takes it, four lanes at once: linearly (a weight that does
/// not move is its own linear path, exactly) or, in the lanes marked in `db`, sign e in dB.
__attribute__((target("avx,fma"))) inline void
weight4(__m256d s, const double* from, const double* lin, const double* sign, const double* db,
        const double* e, const double* step, __m256d& w, __m256d& ws) noexcept
{
    const __m256d linStep = _mm256_load_pd(lin);
    const __m256d wLin = _mm256_fmadd_pd(s, linStep, _mm256_load_pd(from));
    const __m256d wDb = _mm256_mul_pd(_mm256_load_pd(sign), _mm256_load_pd(e));
    const __m256d mask = _mm256_load_pd(db);
    w = _mm256_blendv_pd(wLin, wDb, mask);
    ws = _mm256_blendv_pd(linStep, _mm256_mul_pd(wDb, _mm256_load_pd(step)), mask);
}

__attribute__((target("avx,fma"))) void foldedAt4(const GlidePath* const* paths, const double* s,
                                                  int count, double (*value)[6],
                                                  double (*slope)[6]) noexcept
{
    alignas(32) double lg[4], dg[4], lk[4], dk[4], sv[4], lh[4], dh[4], ll[4], dl[4];
    // The weights: high and low from, step (linear) and sign (in dB) with the lanes moving
    // in dB marked; band from and step.
    alignas(32) double hFrom[4], hLin[4], hSign[4], hDb[4], lFrom[4], lLin[4], lSign[4], lDb[4],
        bFrom[4], bTo[4];
    bool anyHigh = false, anyLow = false;
    for (int i = 0; i < 4; ++i)
    {
        const GlidePath& p = *paths[i < count ? i : 0];
        const double si = std::clamp(s[i < count ? i : 0], 0.0, 1.0);
        lg[i] = p.from.logG;
        dg[i] = p.to.logG - p.from.logG;
        lk[i] = p.from.logK;
        dk[i] = p.to.logK - p.from.logK;
        sv[i] = si;
        const bool high = highInDb(p), low = lowInDb(p);
        anyHigh = anyHigh || high;
        anyLow = anyLow || low;
        lh[i] = high ? p.logHigh0 : 0.0;
        dh[i] = high ? p.logHighStep : 0.0;
        ll[i] = low ? p.logLow0 : 0.0;
        dl[i] = low ? p.logLowStep : 0.0;
        hFrom[i] = p.from.mHigh;
        hLin[i] = p.to.mHigh - p.from.mHigh;
        hSign[i] = p.signHigh;
        hDb[i] = high ? -1.0 : 0.0; // sign bit set (blendv) where the weight moves in dB
        lFrom[i] = p.from.mLow;
        lLin[i] = p.to.mLow - p.from.mLow;
        lSign[i] = p.signLow;
        lDb[i] = low ? -1.0 : 0.0;
        bFrom[i] = p.from.mBand;
        bTo[i] = p.to.mBand;
    }
    const __m256d sv4 = _mm256_load_pd(sv);
    // The weights that move in dB: their magnitudes, four at a time.
    alignas(32) double eh[4] = {1.0, 1.0, 1.0, 1.0}, el[4] = {1.0, 1.0, 1.0, 1.0};
    if (anyHigh)
        _mm256_store_pd(eh, exp4(_mm256_fmadd_pd(sv4, _mm256_load_pd(dh), _mm256_load_pd(lh))));
    if (anyLow)
        _mm256_store_pd(el, exp4(_mm256_fmadd_pd(sv4, _mm256_load_pd(dl), _mm256_load_pd(ll))));
    const __m256d dg4 = _mm256_load_pd(dg), dk4 = _mm256_load_pd(dk);
    const __m256d g = exp4(_mm256_fmadd_pd(sv4, dg4, _mm256_load_pd(lg)));
    const __m256d k = exp4(_mm256_fmadd_pd(sv4, dk4, _mm256_load_pd(lk)));
    const __m256d gs = _mm256_mul_pd(g, dg4), ks = _mm256_mul_pd(k, dk4);
    const __m256d one = _mm256_set1_pd(1.0);
    const __m256d a1 = _mm256_div_pd(one, _mm256_fmadd_pd(g, _mm256_add_pd(g, k), one));
    // a1' = -a1^2 (2 g g' + g' k + g k')
    const __m256d inner =
        _mm256_fmadd_pd(g, ks, _mm256_mul_pd(gs, _mm256_add_pd(_mm256_add_pd(g, g), k)));
    const __m256d a1s =
        _mm256_mul_pd(_mm256_sub_pd(_mm256_setzero_pd(), _mm256_mul_pd(a1, a1)), inner);
    __m256d mh, mhs, ml, mls;
    weight4(sv4, hFrom, hLin, hSign, hDb, eh, dh, mh, mhs);
    weight4(sv4, lFrom, lLin, lSign, lDb, el, dl, ml, mls);
    const __m256d bFrom4 = _mm256_load_pd(bFrom), bTo4 = _mm256_load_pd(bTo);
    const __m256d mbs = _mm256_sub_pd(bTo4, bFrom4);
    // At s = 1 exactly the end value (from + (to - from) need not round to it).
    const __m256d mb = _mm256_blendv_pd(_mm256_fmadd_pd(sv4, mbs, bFrom4), bTo4,
                                        _mm256_cmp_pd(sv4, one, _CMP_GE_OQ));
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
        foldedAt4(paths, s, std::min(count, 4), value, slope);
        return;
    }
#endif
    for (int i = 0; i < std::min(count, 4); ++i)
        paths[i]->foldedAt(s[i], value[i], slope[i]);
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
