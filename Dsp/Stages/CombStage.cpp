#include "CombStage.h"

#include "../Smoothing/Transition.h"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace kerf::dsp
{

namespace
{
constexpr double kPi = std::numbers::pi;

int minWholeFor(CombMode m) noexcept
{
    return m == CombMode::feedback ? 1 : 0;
}

/// One-pole low-pass L(z) = (1 - p)/(1 - p z^-1), p = exp(-2 pi fc / fs) (impulse-invariant
/// one-pole, common practice); unity gain at DC.
double dampingPole(double dampingHz, double sampleRateHz) noexcept
{
    if (!(dampingHz > 0.0))
        return 0.0;
    return std::exp(-2.0 * kPi * std::min(dampingHz, 0.49 * sampleRateHz) / sampleRateHz);
}

ResponseValue dampingResponse(double p, double omega) noexcept
{
    if (p == 0.0)
        return responseConstant(1.0);
    const double num[1] = {1.0 - p};
    const double den[2] = {1.0, -p};
    return firResponse(num, 1, 0.0, omega) / firResponse(den, 2, 0.0, omega);
}
} // namespace

CombSettings clampCombSettings(const CombSettings& in, double sampleRateHz) noexcept
{
    CombSettings s = in;
    s.delayMs =
        std::clamp(std::isfinite(s.delayMs) ? s.delayMs : 5.0, kCombMinDelayMs, kCombMaxDelayMs);
    if (!(s.pitchHz > 0.0) || !std::isfinite(s.pitchHz))
        s.pitchHz = 0.0;
    else
        s.pitchHz = std::clamp(s.pitchHz, 1000.0 / kCombMaxDelayMs,
                               std::min(1000.0 / kCombMinDelayMs, 0.45 * sampleRateHz));
    const double limit = s.mode == CombMode::feedback ? kMaxFeedbackGain : kMaxFeedforwardGain;
    s.gain = std::clamp(std::isfinite(s.gain) ? s.gain : 0.0, -limit, limit);
    s.dampingHz = std::isfinite(s.dampingHz) ? std::max(0.0, s.dampingHz) : 0.0;
    s.mix = std::clamp(std::isfinite(s.mix) ? s.mix : 1.0, 0.0, 1.0);
    s.interpolationOrder = std::clamp(
        s.interpolationOrder, 1,
        s.interpolation == DelayInterpolation::thiran ? kMaxThiranOrder : kMaxLagrangeOrder);
    return s;
}

double combLineDelaySamples(const CombSettings& in, double sampleRateHz) noexcept
{
    const CombSettings s = clampCombSettings(in, sampleRateHz);
    double d = (s.pitchHz > 0.0 ? 1000.0 / s.pitchHz : s.delayMs) * 1e-3 * sampleRateHz;
    const double p = dampingPole(s.dampingHz, sampleRateHz);
    if (s.pitchHz > 0.0 && s.mode == CombMode::feedback && p > 0.0)
    {
        // Phase delay of the damping low-pass at the pitch: -arg L / w0.
        const double w0 = 2.0 * kPi * s.pitchHz / sampleRateHz;
        d -= std::atan2(p * std::sin(w0), 1.0 - p * std::cos(w0)) / w0;
    }
    return std::max(
        d, minimumDelaySamples(s.interpolation, s.interpolationOrder, minWholeFor(s.mode)));
}

ResponseValue combResponseValue(const CombSettings& in, double sampleRateHz, double omega) noexcept
{
    const CombSettings s = clampCombSettings(in, sampleRateHz);
    const ResponseValue e =
        fractionalDelayResponse(combLineDelaySamples(s, sampleRateHz), s.interpolation,
                                s.interpolationOrder, minWholeFor(s.mode), omega) *
        dampingResponse(dampingPole(s.dampingHz, sampleRateHz), omega);
    const ResponseValue one = responseConstant(1.0);
    const ResponseValue wet =
        s.mode == CombMode::feedforward ? one + s.gain * e : one / (one - s.gain * e);
    return responseConstant(1.0 - s.mix) + s.mix * wet;
}

std::complex<double> combResponse(const CombSettings& settings, double sampleRateHz,
                                  double omega) noexcept
{
    return combResponseValue(settings, sampleRateHz, omega).h;
}

double combGroupDelay(const CombSettings& settings, double sampleRateHz, double omega) noexcept
{
    return combResponseValue(settings, sampleRateHz, omega).groupDelaySamples();
}

void CombStage::prepare(double sampleRateHz, int /*maxBlockSize*/, int channels)
{
    sampleRateHz_ = sampleRateHz;
    channels_ = std::max(0, channels);
    const int longest = static_cast<int>(std::ceil(kCombMaxDelayMs * 1e-3 * sampleRateHz)) +
                        kMaxLagrangeOrder + kMaxThiranOrder + 4;
    lineLength_ = 1;
    while (lineLength_ < longest)
        lineLength_ <<= 1;
    mask_ = lineLength_ - 1;
    lines_.assign(static_cast<std::size_t>(channels_) * static_cast<std::size_t>(lineLength_), 0.0);
    apState_.assign(static_cast<std::size_t>(channels_) * kMaxThiranOrder, 0.0);
    lpState_.assign(static_cast<std::size_t>(channels_), 0.0);
    writePos_.assign(static_cast<std::size_t>(channels_), 0);
    setSettings(settings_);
}

void CombStage::reset() noexcept
{
    std::fill(lines_.begin(), lines_.end(), 0.0);
    std::fill(apState_.begin(), apState_.end(), 0.0);
    std::fill(lpState_.begin(), lpState_.end(), 0.0);
    std::fill(writePos_.begin(), writePos_.end(), 0);
    if (sweeping())
    {
        sweepLen_ = 0;
        sweepPos_ = 0;
        useLineDelay(lineDelay_);
    }
}

void CombStage::setSettings(const CombSettings& in) noexcept
{
    settings_ = clampCombSettings(in, sampleRateHz_);
    sweepLen_ = 0;
    sweepPos_ = 0;
    lineDelay_ = combLineDelaySamples(settings_, sampleRateHz_);
    useLineDelay(lineDelay_);
    dampPole_ = dampingPole(settings_.dampingHz, sampleRateHz_);
}

void CombStage::useLineDelay(double delaySamples) noexcept
{
    const DelaySplit d = splitDelay(delaySamples, settings_.interpolation,
                                    settings_.interpolationOrder, minWholeFor(settings_.mode));
    whole_ = d.wholeSamples;
    taps_ = settings_.interpolationOrder + 1;
    if (settings_.interpolation == DelayInterpolation::thiran)
        thiranCoefficients(d.interpolatorSamples, settings_.interpolationOrder, apA_);
    else
        lagrangeTaps(d.interpolatorSamples, settings_.interpolationOrder, fir_);
}

bool CombStage::canSweepTo(const CombSettings& next) const noexcept
{
    const CombSettings n = clampCombSettings(next, sampleRateHz_);
    const CombSettings& a = settings_;
    return a.sweepDelay && n.sweepDelay && a.interpolation == DelayInterpolation::lagrange &&
           n.interpolation == DelayInterpolation::lagrange &&
           a.interpolationOrder == n.interpolationOrder && a.interpolationOrder % 2 == 1 &&
           a.mode == n.mode && a.gain == n.gain && a.dampingHz == n.dampingHz && a.mix == n.mix;
}

void CombStage::sweepAt(long long k, double& logDelay, double* slope) const noexcept
{
    const double len = static_cast<double>(sweepLen_);
    const double t = static_cast<double>(k) / len;
    logDelay = sweepFrom_ + sweepSpan_ * transitionCurve(t) + sweepBend_ * bendCurve(t);
    if (slope != nullptr) // only where a sweep is taken over, not per sample
        *slope = (sweepSpan_ * transitionSlope(t) + sweepBend_ * bendSlope(t)) / len;
}

double CombStage::lineDelayNow() const noexcept
{
    if (!sweeping())
        return lineDelay_;
    double u = 0.0;
    sweepAt(sweepPos_, u);
    return std::clamp(std::exp(u), sweepMin_, sweepMax_);
}

void CombStage::sweepTo(const CombSettings& next, int lengthSamples) noexcept
{
    if (lengthSamples <= 0)
    {
        setSettings(next);
        return;
    }
    // Where the delay is and how fast its log moves (per sample).
    double from = 0.0, slope = 0.0;
    if (sweeping())
        sweepAt(sweepPos_, from, &slope);
    else
        from = std::log(lineDelay_);
    settings_ = clampCombSettings(next, sampleRateHz_);
    lineDelay_ = combLineDelaySamples(settings_, sampleRateHz_);
    sweepFrom_ = from;
    sweepSpan_ = std::log(lineDelay_) - from;
    sweepBend_ = slope * static_cast<double>(lengthSamples); // B'(0) = 1 per unit of t
    sweepLen_ = lengthSamples;
    sweepPos_ = 0;
    sweepMin_ = minimumDelaySamples(settings_.interpolation, settings_.interpolationOrder,
                                    minWholeFor(settings_.mode));
    sweepMax_ = kCombMaxDelayMs * 1e-3 * sampleRateHz_;
}

double CombStage::processSample(int channel, double x) noexcept
{
    double* line =
        lines_.data() + static_cast<std::size_t>(channel) * static_cast<std::size_t>(lineLength_);
    int& pos = writePos_[static_cast<std::size_t>(channel)];
    const int w = pos;
    pos = (pos + 1) & mask_;
    const bool feedback = settings_.mode == CombMode::feedback;
    if (!feedback)
        line[w] = x; // feedforward: the line holds the input, read after writing (M may be 0)
    const int start = w - whole_;
    double v = 0.0;
    if (settings_.interpolation == DelayInterpolation::thiran)
    {
        // All-pass on the whole-sample-delayed signal u[n] = line[start]:
        // t[n] = sum_k a_{N-k} u[n-k] - sum_{k>=1} a_k t[n-k].
        const int n = taps_ - 1;
        double* hist = apState_.data() + static_cast<std::size_t>(channel) * kMaxThiranOrder;
        double acc = 0.0;
        for (int k = 0; k <= n; ++k)
            acc += apA_[n - k] * line[(start - k) & mask_];
        for (int k = 1; k <= n; ++k)
            acc -= apA_[k] * hist[k - 1];
        for (int k = n - 1; k > 0; --k)
            hist[k] = hist[k - 1];
        hist[0] = acc;
        v = acc;
    }
    else
    {
        for (int i = 0; i < taps_; ++i)
            v += fir_[i] * line[(start - i) & mask_];
    }
    if (dampPole_ != 0.0)
    {
        double& lp = lpState_[static_cast<std::size_t>(channel)];
        lp = (1.0 - dampPole_) * v + dampPole_ * lp;
        v = lp;
    }
    const double y = x + settings_.gain * v;
    if (feedback)
        line[w] = y;
    return (1.0 - settings_.mix) * x + settings_.mix * y;
}

template <typename Sample>
void CombStage::processAny(Sample* const* channels, int numChannels, int n) noexcept
{
    const int nc = std::min(numChannels, channels_);
    int i = 0;
    // A sweep moves the delay sample by sample, the same for every channel.
    for (; i < n && sweeping(); ++i)
    {
        double u = 0.0;
        sweepAt(sweepPos_, u);
        useLineDelay(std::clamp(std::exp(u), sweepMin_, sweepMax_));
        for (int c = 0; c < nc; ++c)
            channels[c][i] =
                static_cast<Sample>(processSample(c, static_cast<double>(channels[c][i])));
        if (++sweepPos_ >= sweepLen_)
        {
            sweepLen_ = 0; // arrived: exactly the target's delay from here on
            sweepPos_ = 0;
            useLineDelay(lineDelay_);
        }
    }
    for (int c = 0; c < nc; ++c)
        for (int k = i; k < n; ++k)
            channels[c][k] =
                static_cast<Sample>(processSample(c, static_cast<double>(channels[c][k])));
}

void CombStage::process(double* const* channels, int numChannels, int n) noexcept
{
    processAny(channels, numChannels, n);
}

void CombStage::process(float* const* channels, int numChannels, int n) noexcept
{
    processAny(channels, numChannels, n);
}

} // namespace kerf::dsp
