#pragma once
// Echo-cancellation stage. Model of the recording: y[n] = x[n] + sum_k a_k x[n - D_k]
// (up to kMaxEchoReflections reflections, fractional delays). The stage undoes it:
//  - `exact`:  the recursive inverse z[n] = y[n] - sum_k a_k z[n - D_k], i.e.
//              H(z) = 1 / P(z), P(z) = 1 + sum_k a_k z^-D_k, fractional delays realised by
//              Lagrange interpolation inside the loop (Laakso et al. 1996). Stable only when
//              every root of P lies inside the unit circle: checkEchoStability tests it.
//  - `series`: the truncated expansion 1/P ~ sum_{m=0}^{T} (-A)^m, A = P - 1, an FIR
//              (always stable). The cascade leaves P(z) S_T(z) = 1 - (-A(z))^{T+1}, so the
//              residual echo falls as gain^(T+1).
// No JUCE. prepare() allocates; setSettings() and process() never allocate, lock or do I/O.
#include "FractionalDelay.h"

#include <array>
#include <complex>
#include <cstddef>
#include <string>
#include <vector>

namespace kerf::dsp
{

/// Largest number of reflections in an echo model.
inline constexpr int kMaxEchoReflections = 4;
/// Shortest reflection delay accepted, ms (the recursion needs at least one whole sample
/// plus the interpolator's centre at every supported rate).
inline constexpr double kMinEchoDelayMs = 0.5;
/// Longest reflection delay accepted, ms (sets the delay-line size in prepare()).
inline constexpr double kMaxEchoDelayMs = 250.0;
/// Largest number of series terms (`terms`); each term is one FIR pass.
inline constexpr int kMaxEchoSeriesTerms = 12;
/// Lagrange order used by default for fractional reflection delays.
inline constexpr int kDefaultEchoInterpolationOrder = 15;

/// One reflection: the same sound again delayMs later, scaled by gain (linear, signed).
struct EchoReflection
{
    double delayMs = 10.0; ///< kMinEchoDelayMs..kMaxEchoDelayMs
    double gain = 0.0;     ///< linear; |gain| < 1 for a causal inverse of a single reflection
};

/// How the stage inverts the echo model.
enum class EchoMethod
{
    exact, ///< recursive inverse 1/P(z); refused by checkEchoStability when unstable
    series ///< FIR of `terms` correction terms; always stable
};

/// Settings of the echo-cancellation stage.
struct EchoCancelSettings
{
    std::array<EchoReflection, kMaxEchoReflections> reflections{};
    int numReflections = 0;                ///< 0..kMaxEchoReflections
    EchoMethod method = EchoMethod::exact; ///< see EchoMethod
    int terms = 4;                         ///< series terms, 1..kMaxEchoSeriesTerms
    int interpolationOrder = kDefaultEchoInterpolationOrder; ///< Lagrange order, 1..31
};

/// Result of the stability test of an echo model.
struct EchoStability
{
    bool stable = true;    ///< true: the exact (recursive) inverse is stable
    int failingDegree = 0; ///< Schur-Cohn step at which |k| >= 1 (0 when stable)
    double failingReflectionCoefficient = 0.0; ///< that |k|
    std::string message;                       ///< empty when stable; otherwise why and what to do
};

/// Coefficients p[0..L] of P(z) = 1 + sum_k a_k z^-M_k L_k(z) in powers of z^-1, exactly as
/// the stage realises it (M_k whole samples, L_k the Lagrange interpolator).
std::vector<double> echoModelPolynomial(const EchoCancelSettings& settings, double sampleRateHz);

/// Schur-Cohn stability test (step-down recursion of the reflection coefficients; E. I. Jury,
/// "Theory and Application of the z-Transform Method", 1964; J. G. Proakis, D. G. Manolakis,
/// "Digital Signal Processing", Schur-Cohn test, from memory): every root of
/// c[0] + c[1] z^-1 + ... + c[n-1] z^-(n-1) lies strictly inside the unit circle iff every
/// |k_m| < 1, k_m = last coefficient of the monic polynomial at step m. O(n^2) time, O(n)
/// memory. Returns true when stable; on failure writes the step and |k| if pointers given.
bool schurCohnStable(std::vector<double> c, int* failingDegree = nullptr,
                     double* failingK = nullptr);

/// Whether the exact inverse of this model is stable at this rate, with a message that says
/// why not and what to do. Run off the audio thread (O(L^2), L = longest delay in samples).
EchoStability checkEchoStability(const EchoCancelSettings& settings, double sampleRateHz);

/// The model P(e^{j omega}) = 1 + sum_k a_k e^{-j omega M_k} L_k(e^{j omega}), with derivative.
ResponseValue echoModelResponse(const EchoCancelSettings& settings, double sampleRateHz,
                                double omega) noexcept;

/// Exact H(e^{j omega}) of the stage for its method (exact: 1/P; series: the Horner cascade
/// sum_{m=0}^{T} (-A)^m), with dH/domega; omega in radians per sample.
ResponseValue echoCancelResponseValue(const EchoCancelSettings& settings, double sampleRateHz,
                                      double omega) noexcept;

/// H(e^{j omega}) of the stage; omega in radians per sample.
std::complex<double> echoCancelResponse(const EchoCancelSettings& settings, double sampleRateHz,
                                        double omega) noexcept;

/// Group delay of the stage in samples at omega (analytic derivative of H).
double echoCancelGroupDelay(const EchoCancelSettings& settings, double sampleRateHz,
                            double omega) noexcept;

/// Realtime echo canceller, one independent state per channel.
class EchoCanceller
{
public:
    /// Allocates delay lines for kMaxEchoDelayMs at sampleRateHz for every method.
    void prepare(double sampleRateHz, int maxBlockSize, int channels);
    /// Clears every delay line.
    void reset() noexcept;
    /// Takes new settings (ranges clamped). The caller runs checkEchoStability first for
    /// `exact`; if an unstable model gets here anyway, a runaway guard clears the state.
    void setSettings(const EchoCancelSettings& settings) noexcept;
    /// Processes n samples of numChannels channels in place (numChannels <= prepared).
    void process(double* const* channels, int numChannels, int n) noexcept;
    /// Float overload (processing in double).
    void process(float* const* channels, int numChannels, int n) noexcept;

    /// The settings in use (after clamping).
    const EchoCancelSettings& settings() const noexcept { return settings_; }

private:
    struct Path
    {
        int whole = 1;
        int taps = 2;
        double weighted[kMaxLagrangeOrder + 1] = {}; // gain * Lagrange taps
    };

    double processSample(int channel, double x) noexcept;

    EchoCancelSettings settings_{};
    double sampleRateHz_ = 48000.0;
    int channels_ = 0;
    int lineLength_ = 0;
    int mask_ = 0;
    int numPaths_ = 0;
    std::array<Path, kMaxEchoReflections> paths_{};
    std::vector<double> lines_; // channel-major: (kMaxEchoSeriesTerms + 1) lines each
    std::vector<int> writePos_;
};

/// Result of the offline non-causal cancellation.
struct NonCausalResult
{
    bool ok = false;
    std::string message; ///< why it was refused (empty when ok)
};

/// Offline cancellation by processing backwards in time (for models whose causal inverse is
/// unstable, e.g. a reflection stronger than the direct sound). Writing y = P x with the
/// longest reflection p as pivot, x[n] = (y[n + D_p] - x[n + D_p]
/// - sum_{k != p} a_k x[n + D_p - D_k]) / a_p needs only later samples of x, so it runs from
/// the end of the buffer towards the start. In reversed time that is an ordinary causal
/// recursion with the model {D_p: 1/a_p} + {D_p - D_k: a_k/a_p}; it is stable exactly when
/// every root of P lies OUTSIDE the unit circle (checked with Schur-Cohn on that model) —
/// for one reflection, when |a| > 1. The filter is anti-causal, so it cannot run live.
/// samples: one channel, n values, processed in place. Allocates.
NonCausalResult cancelEchoNonCausal(const EchoCancelSettings& settings, double sampleRateHz,
                                    double* samples, std::size_t n);

/// H(e^{j omega}) (with derivative) of cancelEchoNonCausal for this model.
ResponseValue echoNonCausalResponseValue(const EchoCancelSettings& settings, double sampleRateHz,
                                         double omega);

} // namespace kerf::dsp
