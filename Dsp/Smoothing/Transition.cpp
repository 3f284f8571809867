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

GlidePath::GlidePath(const SvfNatural& a, const SvfNatural& b) noexcept
    : GlidePath(a, b, SvfNatural{0.0, 0.0, 0.0, 0.0, 0.0})
{
}

GlidePath::GlidePath(const SvfNatural& a, const SvfNatural& b, const SvfNatural& velocity,
                     double span) noexcept
    : from(a), to(b)
{
    bendSpan = std::clamp(span, 1e-3, 1.0);
    invBendSpan = 1.0 / bendSpan;
    base[0] = a.logG;
    step[0] = b.logG - a.logG;
    bend[0] = velocity.logG;
    base[1] = a.logK;
    step[1] = b.logK - a.logK;
    bend[1] = velocity.logK;
    base[3] = a.mBand;
    step[3] = b.mBand - a.mBand;
    bend[3] = velocity.mBand;
    // A weight moves in dB when both ends share a sign (d(log |m|)/dt = m'/m there), else
    // linearly; one that does not move (a peaking section's 1) stays exactly itself.
    // The bend's largest excursion: bend span max B, max B = B(1/5) = 4^4 / 5^5.
    const double reach = bendSpan * 256.0 / 3125.0;
    auto weight = [reach](double wa, double wb, double v, double& x0, double& dx, double& bx,
                          double& sign) -> bool
    {
        x0 = wa;
        dx = 0.0;
        bx = 0.0;
        if (wa == wb && v == 0.0)
            return false;
        // In dB unless the bend would move it by more than 6 dB (ln 2 in log magnitude).
        if (sameSign(wa, wb) && reach * std::abs(v / wa) <= std::log(2.0))
        {
            sign = wa > 0.0 ? 1.0 : -1.0;
            x0 = std::log(std::abs(wa));
            dx = std::log(std::abs(wb)) - x0;
            bx = v / wa;
            return true;
        }
        dx = wb - wa;
        bx = v;
        return false;
    };
    dbHigh = weight(a.mHigh, b.mHigh, velocity.mHigh, base[2], step[2], bend[2], signHigh);
    dbLow = weight(a.mLow, b.mLow, velocity.mLow, base[4], step[4], bend[4], signLow);
}

namespace
{
/// Where a path is at time fraction t, before the exponentials: each coordinate x and its
/// rate d/dt (x(t) = base + step s(t) + bend B(t), so x'(t) = step s'(t) + bend B'(t)).
struct PathPoint
{
    double x[5], rate[5];
};

inline PathPoint pathPoint(const GlidePath& p, double t) noexcept
{
    const double tc = std::clamp(t, 0.0, 1.0);
    const double s = transitionCurve(tc), ds = transitionSlope(tc);
    const double b = p.bendSpan * bendCurve(tc * p.invBendSpan), db = bendSlope(tc * p.invBendSpan);
    PathPoint q;
    for (int i = 0; i < 5; ++i)
    {
        q.x[i] = p.base[i] + s * p.step[i] + b * p.bend[i];
        q.rate[i] = ds * p.step[i] + db * p.bend[i];
    }
    // At the ends exactly the end points (from + (to - from) need not round to to).
    if (t >= 1.0)
        q.x[3] = p.to.mBand;
    return q;
}

/// The folding of everything as the kernels fold them, given g, k, a1, the weights and their
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
    n.logG = q.x[0];
    n.logK = q.x[1];
    n.mHigh = dbHigh ? signHigh * std::exp(q.x[2]) : q.x[2];
    n.mBand = q.x[3];
    n.mLow = dbLow ? signLow * std::exp(q.x[4]) : q.x[4];
    return n;
}

SvfNatural GlidePath::velocityAt(double t) const noexcept
{
    const PathPoint q = pathPoint(*this, t);
    SvfNatural v;
    v.logG = q.rate[0];
    v.logK = q.rate[1];
    v.mHigh = dbHigh ? signHigh * std::exp(q.x[2]) * q.rate[2] : q.rate[2];
    v.mBand = q.rate[3];
    v.mLow = dbLow ? signLow * std::exp(q.x[4]) * q.rate[4] : q.rate[4];
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

/// Four lanes of c0 + x (c1 + x (c2 + ...)) for coefficients cs[0], cs[1], ...
template <std::size_t N>
__attribute__((target("avx,fma"))) inline __m256d horner4(__m256d x, const double (&cs)[N]) noexcept
{
    __m256d p = _mm256_set1_pd(cs[N - 1]);
    for (std::size_t i = N - 1; i-- > 0;)
        p = _mm256_fmadd_pd(p, x, _mm256_set1_pd(cs[i]));
    return p;
}

/// A weight as fold takes it, four lanes at once (the high weight or the low): linear (or
/// still) lanes as they are; lanes that move in dB sign e^x, with slope sign e^x rate.
__attribute__((target("avx,fma"))) inline void weight4(const GlidePath* const* p, int count,
                                                       bool high, __m256d x, __m256d rate,
                                                       __m256d& w, __m256d& ws) noexcept
{
    w = x;
    ws = rate;
    bool db[4];
    double sign[4];
    bool any = false;
    for (int i = 0; i < 4; ++i)
    {
        db[i] = i < count && (high ? p[i]->dbHigh : p[i]->dbLow);
        sign[i] = high ? p[i]->signHigh : p[i]->signLow;
        any = any || db[i];
    }
    if (!any)
        return;
    const __m256d mask = _mm256_castsi256_pd(
        _mm256_set_epi64x(db[3] ? -1 : 0, db[2] ? -1 : 0, db[1] ? -1 : 0, db[0] ? -1 : 0));
    const __m256d wDb = _mm256_mul_pd(_mm256_set_pd(sign[3], sign[2], sign[1], sign[0]), exp4(x));
    w = _mm256_blendv_pd(w, wDb, mask);
    ws = _mm256_blendv_pd(ws, _mm256_mul_pd(wDb, rate), mask);
}

__attribute__((target("avx,fma"))) void foldedAt4(const GlidePath* const* paths, const double* t,
                                                  int count, double (*value)[6],
                                                  double (*slope)[6]) noexcept
{
    const GlidePath* p[4];
    alignas(32) double tv[4];
    for (int i = 0; i < 4; ++i)
    {
        p[i] = paths[i < count ? i : 0];
        tv[i] = t[i < count ? i : 0];
    }
    // s(t), s'(t) and the bend span B(t / span), B'(t / span) of the four lanes (t clamped
    // to [0, 1]; Transition.h): s = t^4 (35 - 84 t + 70 t^2 - 20 t^3), s' = 140 t^3 (1 - t)^3,
    // and with r = min(t / span, 1), w = 1 - r: B = r w^4, B' = w^3 (1 - 5 r).
    const __m256d zero = _mm256_setzero_pd(), one = _mm256_set1_pd(1.0);
    const __m256d traw = _mm256_load_pd(tv);
    const __m256d x = _mm256_min_pd(_mm256_max_pd(traw, zero), one);
    const __m256d u = _mm256_sub_pd(one, x);
    const __m256d x2 = _mm256_mul_pd(x, x);
    const __m256d xu = _mm256_mul_pd(x, u);
    const __m256d s = _mm256_mul_pd(_mm256_mul_pd(x2, x2), horner4(x, {35.0, -84.0, 70.0, -20.0}));
    const __m256d ds =
        _mm256_mul_pd(_mm256_set1_pd(140.0), _mm256_mul_pd(_mm256_mul_pd(xu, xu), xu));
    const __m256d span =
        _mm256_set_pd(p[3]->bendSpan, p[2]->bendSpan, p[1]->bendSpan, p[0]->bendSpan);
    const __m256d invSpan =
        _mm256_set_pd(p[3]->invBendSpan, p[2]->invBendSpan, p[1]->invBendSpan, p[0]->invBendSpan);
    const __m256d r = _mm256_min_pd(_mm256_mul_pd(x, invSpan), one);
    const __m256d w = _mm256_sub_pd(one, r);
    const __m256d w2 = _mm256_mul_pd(w, w);
    const __m256d bc = _mm256_mul_pd(span, _mm256_mul_pd(r, _mm256_mul_pd(w2, w2)));
    const __m256d db =
        _mm256_mul_pd(_mm256_mul_pd(w2, w), _mm256_fnmadd_pd(_mm256_set1_pd(5.0), r, one));
    // Each coordinate and its rate: base + step s + bend B and step s' + bend B'.
    __m256d xs[5], rs[5];
    for (int c = 0; c < 5; ++c)
    {
        const __m256d b0 =
            _mm256_set_pd(p[3]->base[c], p[2]->base[c], p[1]->base[c], p[0]->base[c]);
        const __m256d st =
            _mm256_set_pd(p[3]->step[c], p[2]->step[c], p[1]->step[c], p[0]->step[c]);
        const __m256d be =
            _mm256_set_pd(p[3]->bend[c], p[2]->bend[c], p[1]->bend[c], p[0]->bend[c]);
        xs[c] = _mm256_fmadd_pd(bc, be, _mm256_fmadd_pd(s, st, b0));
        rs[c] = _mm256_fmadd_pd(db, be, _mm256_mul_pd(ds, st));
    }
    __m256d mh, mhs, ml, mls;
    weight4(p, count, true, xs[2], rs[2], mh, mhs);
    weight4(p, count, false, xs[4], rs[4], ml, mls);
    const __m256d g = exp4(xs[0]);
    const __m256d k = exp4(xs[1]);
    const __m256d gs = _mm256_mul_pd(g, rs[0]), ks = _mm256_mul_pd(k, rs[1]);
    const __m256d a1 = _mm256_div_pd(one, _mm256_fmadd_pd(g, _mm256_add_pd(g, k), one));
    // a1' = -a1^2 (2 g g' + g' k + g k')
    const __m256d inner =
        _mm256_fmadd_pd(g, ks, _mm256_mul_pd(gs, _mm256_add_pd(_mm256_add_pd(g, g), k)));
    const __m256d a1s = _mm256_mul_pd(_mm256_sub_pd(zero, _mm256_mul_pd(a1, a1)), inner);
    // At t >= 1 exactly the end value of the band weight.
    const __m256d bTo =
        _mm256_set_pd(p[3]->to.mBand, p[2]->to.mBand, p[1]->to.mBand, p[0]->to.mBand);
    const __m256d mb = _mm256_blendv_pd(xs[3], bTo, _mm256_cmp_pd(traw, one, _CMP_GE_OQ));
    const __m256d mbs = rs[3];
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
    const double g = std::exp(q.x[0]), gs = g * q.rate[0];
    const double k = std::exp(q.x[1]), ks = k * q.rate[1];
    const double a1 = 1.0 / (1.0 + g * (g + k));
    const double a1s = -a1 * a1 * (2.0 * g * gs + gs * k + g * ks);
    double mh = q.x[2], mhs = q.rate[2], ml = q.x[4], mls = q.rate[4];
    if (dbHigh)
    {
        mh = signHigh * std::exp(q.x[2]);
        mhs = mh * q.rate[2];
    }
    if (dbLow)
    {
        ml = signLow * std::exp(q.x[4]);
        mls = ml * q.rate[4];
    }
    fold(g, gs, k, ks, a1, a1s, mh, mhs, q.x[3], q.rate[3], ml, mls, value, slope);
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

bool sectionsKeepStructure(const StageSpec& a, const StageSpec& b) noexcept
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
    return !(carriesGain && (a.gainDb == 0.0) != (b.gainDb == 0.0));
}

bool glideMoveWithin(const double a[4], const double b[4], const double reach[4]) noexcept
{
    // Frequency within an octave, gain within 12 dB, Q and slope within a factor of two (a
    // q of 0 stays 0: sectionsKeepStructure).
    const double limit[4] = {1.0, 12.0, 1.0, 1.0};
    for (int i = 0; i < 4; ++i)
        if (!(std::abs(b[i] - a[i]) + std::abs(reach[i]) <= limit[i]))
            return false;
    return true;
}

bool sectionsCanGlide(const StageSpec& a, const StageSpec& b) noexcept
{
    if (!sectionsKeepStructure(a, b))
        return false;
    double xa[4], xb[4];
    const double none[4] = {0.0, 0.0, 0.0, 0.0};
    SettingsPath::coordinates(a, xa);
    SettingsPath::coordinates(b, xb);
    return glideMoveWithin(xa, xb, none);
}

void SettingsPath::coordinates(const StageSpec& s, double x[4]) noexcept
{
    x[0] = std::log2(std::max(s.freqHz, 1e-3));
    x[1] = s.gainDb;
    // q = 0 (the alignment's own) never glides to a q > 0 (sectionsKeepStructure).
    x[2] = s.q > 0.0 ? std::log2(s.q) : 0.0;
    x[3] = s.slope > 0.0 ? std::log2(s.slope) : 0.0;
}

SettingsPath::SettingsPath(const double a[4], const double b[4], const double velocity[4],
                           double span) noexcept
{
    bendSpan = std::clamp(span, 1e-3, 1.0);
    invBendSpan = 1.0 / bendSpan;
    for (int i = 0; i < 4; ++i)
    {
        base[i] = a[i];
        step[i] = b[i] - a[i];
        bend[i] = velocity[i];
    }
}

void SettingsPath::at(double t, double x[4], double rate[4], double* rate2) const noexcept
{
    // As pathPoint: x = base + step s(t) + bend span B(t / span).
    const double tc = std::clamp(t, 0.0, 1.0);
    const double s = transitionCurve(tc), ds = transitionSlope(tc);
    const double b = bendSpan * bendCurve(tc * invBendSpan), db = bendSlope(tc * invBendSpan);
    // s'' = 420 t^2 (1 - t)^2 (1 - 2 t); B''(r) = -(1 - r)^2 (8 - 20 r), over the span.
    const double a = tc * (1.0 - tc), r = std::min(tc * invBendSpan, 1.0);
    const double d2s = 420.0 * a * a * (1.0 - 2.0 * tc);
    const double d2b = -(1.0 - r) * (1.0 - r) * (8.0 - 20.0 * r) * invBendSpan;
    for (int i = 0; i < 4; ++i)
    {
        x[i] = base[i] + s * step[i] + b * bend[i];
        rate[i] = t >= 1.0 ? 0.0 : ds * step[i] + db * bend[i];
        if (rate2 != nullptr)
            rate2[i] = t >= 1.0 ? 0.0 : d2s * step[i] + d2b * bend[i];
    }
}

} // namespace kerf::dsp
