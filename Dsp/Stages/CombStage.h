#pragma once
// Comb stage: feedforward y[n] = x[n] + g x[n-D] or feedback y[n] = x[n] + g y[n-D], the
// delay fractional (Lagrange FIR or Thiran all-pass; Laakso et al. 1996), an optional
// one-pole low-pass in the delayed path (inside the loop for feedback: damping), and a
// dry/wet mix. H(z) = (1 - mix) + mix W(z), W = 1 + g E(z) (feedforward) or
// 1 / (1 - g E(z)) (feedback), E(z) = z^-M I(z) L(z): whole delay, interpolator, damping.
// No JUCE. prepare() allocates; setSettings() and process() never allocate, lock or do I/O.
#include "FractionalDelay.h"

#include <complex>
#include <vector>

namespace kerf::dsp
{

/// Shortest and longest comb delay, ms.
inline constexpr double kCombMinDelayMs = 0.05;
inline constexpr double kCombMaxDelayMs = 100.0;
/// Largest feedback gain magnitude: the loop 1/(1 - g E) needs |g E| < 1 on the unit circle
/// (|E| <= 1 for every interpolator and damping filter here), held with a margin; a user
/// asking for more gets this value.
inline constexpr double kMaxFeedbackGain = 0.995;
/// Largest feedforward gain magnitude.
inline constexpr double kMaxFeedforwardGain = 1.0;

/// Feedforward or feedback comb.
enum class CombMode
{
    feedforward, ///< y[n] = x[n] + g x[n-D] (notches)
    feedback     ///< y[n] = x[n] + g y[n-D] (resonances)
};

/// Settings of the comb stage.
struct CombSettings
{
    CombMode mode = CombMode::feedforward;
    double delayMs = 5.0;   ///< kCombMinDelayMs..kCombMaxDelayMs
    double pitchHz = 0.0;   ///< > 0: tuned resonance, the delay is one period 1/pitchHz
    double gain = 0.5;      ///< linear, signed; clamped to the mode's limit
    double dampingHz = 0.0; ///< cut-off of the one-pole low-pass in the delayed path; 0 = off
    double mix = 1.0;       ///< 0 = dry only .. 1 = comb only
    DelayInterpolation interpolation = DelayInterpolation::lagrange;
    int interpolationOrder = 3; ///< Lagrange 1..kMaxLagrangeOrder, Thiran 1..kMaxThiranOrder
    /// How a running stage takes a new delay (or pitch): false crossfades to it, so nothing
    /// sweeps in pitch; true sweeps the delay there along a smooth path in log delay (the
    /// pitch of the combing glides: Doppler on what passes through, on purpose). Sweeps need
    /// Lagrange interpolation of odd order (CombStage::canSweepTo); otherwise it crossfades.
    bool sweepDelay = false;
};

/// The settings with every field in range (what the stage realises).
CombSettings clampCombSettings(const CombSettings& settings, double sampleRateHz) noexcept;

/// Delay, in samples, given to the delay line (whole + interpolator). With pitchHz in
/// feedback mode it is one period minus the damping filter's phase delay at pitchHz, so the
/// loop's total phase at pitchHz is a whole number of cycles (the resonance lands on pitch).
double combLineDelaySamples(const CombSettings& settings, double sampleRateHz) noexcept;

/// Exact H(e^{j omega}) of the stage with dH/domega (interpolator and damping included).
ResponseValue combResponseValue(const CombSettings& settings, double sampleRateHz,
                                double omega) noexcept;

/// H(e^{j omega}) of the stage; omega in radians per sample.
std::complex<double> combResponse(const CombSettings& settings, double sampleRateHz,
                                  double omega) noexcept;

/// Group delay of the stage in samples at omega (analytic derivative of H).
double combGroupDelay(const CombSettings& settings, double sampleRateHz, double omega) noexcept;

/// Realtime comb processor, one state per channel.
class CombStage
{
public:
    /// Allocates delay lines for kCombMaxDelayMs at sampleRateHz.
    void prepare(double sampleRateHz, int maxBlockSize, int channels);
    /// Clears every delay line and filter memory.
    void reset() noexcept;
    /// Takes new settings (clamped with clampCombSettings).
    void setSettings(const CombSettings& settings) noexcept;
    /// Processes n samples of numChannels channels in place.
    void process(double* const* channels, int numChannels, int n) noexcept;
    /// Float overload (processing in double).
    void process(float* const* channels, int numChannels, int n) noexcept;
    /// The settings in use (after clamping).
    const CombSettings& settings() const noexcept { return settings_; }

    /// True if the stage can sweep from the settings in use to `next` (sweepTo): both ask
    /// for sweeps, both use Lagrange interpolation of the same odd order (whose tap sets
    /// meet exactly where the whole-sample part of a moving delay steps, at a whole
    /// interpolator delay: the output stays continuous), and nothing but the delay or the
    /// pitch differs.
    bool canSweepTo(const CombSettings& next) const noexcept;
    /// Moves the delay line's delay from where it is to next's over lengthSamples (> 0):
    /// log delay follows the transition curve (Smoothing/Transition.h), and a sweep that
    /// takes over a running one carries its slope on (the bend term), so the delay and its
    /// rate of change stay continuous. Call only when canSweepTo(next). Never allocates.
    void sweepTo(const CombSettings& next, int lengthSamples) noexcept;
    /// True while a sweep runs.
    bool sweeping() const noexcept { return sweepLen_ > 0; }
    /// Samples until the running sweep arrives (0 when none runs).
    long long sweepSamplesLeft() const noexcept { return sweepLen_ - sweepPos_; }
    /// The delay line's delay (whole part + interpolator), samples, for the next sample.
    double lineDelayNow() const noexcept;

private:
    double processSample(int channel, double x) noexcept;
    template <typename Sample>
    void processAny(Sample* const* channels, int numChannels, int n) noexcept;
    void useLineDelay(double delaySamples) noexcept;
    /// Log delay at sample k of the running sweep, and (if asked) its slope per sample.
    void sweepAt(long long k, double& logDelay, double* slope = nullptr) const noexcept;

    CombSettings settings_{};
    double sampleRateHz_ = 48000.0;
    int channels_ = 0;
    int lineLength_ = 0;
    int mask_ = 0;
    int whole_ = 1;
    int taps_ = 4;
    double fir_[kMaxLagrangeOrder + 1] = {}; // Lagrange taps
    double apA_[kMaxThiranOrder + 1] = {};   // Thiran denominator
    double dampPole_ = 0.0;                  // one-pole coefficient p (0 = off)
    std::vector<double> lines_;              // channels x lineLength_
    std::vector<double> apState_;            // channels x kMaxThiranOrder (output history)
    std::vector<double> lpState_;            // channels
    std::vector<int> writePos_;
    double lineDelay_ = 0.0; // delay in use while still
    // The running sweep: log delay = from + span s(k / len) + bend B(k / len).
    double sweepFrom_ = 0.0, sweepSpan_ = 0.0, sweepBend_ = 0.0;
    long long sweepLen_ = 0, sweepPos_ = 0;
    double sweepMin_ = 0.0, sweepMax_ = 0.0; // the line's limits, samples
};

} // namespace kerf::dsp
