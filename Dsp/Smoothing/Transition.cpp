#include "Transition.h"

#include "../Chain.h"

#include <algorithm>
#include <cmath>

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

void GlidePath::foldedAt(double s, double value[6], double slope[6]) const noexcept
{
    const SvfNatural n = at(s);
    // Each natural value and its derivative along s.
    const double g = std::exp(n.logG), gs = g * (to.logG - from.logG);
    const double k = std::exp(n.logK), ks = k * (to.logK - from.logK);
    auto weightSlope = [&](double a, double b, bool log, double value, double logStep) {
        return a == b ? 0.0 : log ? value * logStep : b - a;
    };
    const double mh = n.mHigh, mhs = weightSlope(from.mHigh, to.mHigh, logHigh, mh, logHighStep);
    const double mb = n.mBand, mbs = to.mBand - from.mBand;
    const double ml = n.mLow, mls = weightSlope(from.mLow, to.mLow, logLow, ml, logLowStep);
    // As SvfCoeffs::updateDerived and the fold in Chain.cpp, in the same order.
    const double a1 = 1.0 / (1.0 + g * (g + k));
    const double a1s = -a1 * a1 * (2.0 * g * gs + gs * k + g * ks);
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
