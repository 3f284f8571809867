#pragma once
// Estimating discrete reflections (delay, gain, confidence) from a recording alone.
//  1. Frame-averaged power cepstrum (B. P. Bogert, M. J. R. Healy, J. W. Tukey, "The Quefrency
//     Alanysis of Time Series for Echoes", 1963; D. G. Childers, D. P. Skinner,
//     R. C. Kemerait, "The Cepstrum: A Guide to Processing", Proc. IEEE 65(10), 1977): Hann
//     frames of at least 4x the longest delay, quietest 30 % dropped, low quefrencies (the
//     source envelope) liftered out; the largest |c[q]| between the delay limits is the
//     candidate, its start gain c[q]/rho(q) with rho the frame-truncation factor.
//  2. Refinement: least squares on the cancelled output. The excerpt (loudest refineSeconds)
//     is pre-filtered (whitened where it stands 20 dB over its noise floor, other bands
//     removed), the exact inverse with Lagrange fractional delays runs on it, and
//     Levenberg-Marquardt on gain and sub-sample delay minimises the output energy of the
//     active blocks; then a robust pass takes the median of per-frame Gauss-Newton steps.
//     A new candidate is screened by one robust step before the full refinement (see .cpp).
//  3. Confidence: the share of frames whose own gain estimate agrees with the final one.
//     A candidate joins the model provisionally when that share reaches 0.8 x the threshold,
//     its gain reaches minGain, and its refined delay stays inside the searched range and
//     within 2 samples of the cepstral peak; otherwise it is set aside (the peak's lag too)
//     and the next is tried.
//  4. Further reflections: cancel the found ones, re-take the cepstrum (band clear of the
//     noise only), repeat.
//  5. Joint pass: all reflections refined together, then the least consistent one below the
//     threshold (or any, while the model's exact inverse is unstable) is dropped, until all
//     pass.
//  6. Final refinement of the reflections up to 25 ms: the noise floor measured after
//     cancelling, Wiener-weighted whitening with the noise's own energy compensated, a robust
//     pass, then two robustly reweighted least-squares passes (see refineSparse in the .cpp);
//     a reflection that falls below the threshold or minGain here is dropped and the rest
//     refined again.
// Runs off the audio thread: allocates. FFTs through FFTW 3 (plans created under a mutex).
#include "../Stages/EchoCanceller.h"

#include <cstddef>
#include <string>
#include <vector>

namespace kerf::dsp
{

/// Options of estimateEchoes.
struct EchoEstimatorOptions
{
    double minDelayMs = 1.5;          ///< shortest delay searched, ms (>= kMinEchoDelayMs)
    double maxDelayMs = 100.0;        ///< longest delay searched, ms (<= kMaxEchoDelayMs)
    int maxReflections = 4;           ///< 1..kMaxEchoReflections
    double confidenceThreshold = 0.5; ///< reflections below this confidence are not reported
    double minGain = 0.1;             ///< weaker refined reflections (|gain|) are not reported
    double refineSeconds = 10.0;      ///< longest excerpt (the loudest) used for refinement, s
    int interpolationOrder = 7; ///< Lagrange order used while fitting (the stage may use more)
};

/// One estimated reflection.
struct EchoReflectionEstimate
{
    double delayMs = 0.0;      ///< delay in ms
    double delaySamples = 0.0; ///< the same delay in samples at the recording's rate
    double gain = 0.0;         ///< linear, signed
    double confidence = 0.0;   ///< 0..1: share of the frames whose own gain estimate agrees
                               ///< with the final one within half the gain (see .cpp)
};

/// Result of estimateEchoes.
struct EchoEstimate
{
    double sampleRateHz = 0.0;
    std::vector<EchoReflectionEstimate> reflections; ///< strongest first, all >= threshold
    double strongestRejectedConfidence = 0.0; ///< best candidate that did not pass (diagnostic)
    std::string message;                      ///< why nothing could be estimated, if so
};

/// Estimates up to options.maxReflections reflections of a mono recording (n samples at
/// sampleRateHz). Off the audio thread only.
EchoEstimate estimateEchoes(const float* mono, std::size_t n, double sampleRateHz,
                            const EchoEstimatorOptions& options);

/// Analysis frame of the estimator's cepstrum for delays up to maxDelayMs: the smallest even
/// size with no prime factor above 5 that is at least 4x the delay (and 2048 - 131072).
int echoEstimatorFrameSize(double maxDelayMs, double sampleRateHz);

/// Frame-averaged power cepstrum: Hann frames of frameSize (even) with hop
/// frameSize/2, the quietest dropQuietFraction of frames left out (and, for long
/// recordings, all but the loudest 240), mean of ln(|X|^2) over the
/// remaining frames, inverse FFT. Returns c[0..frameSize/2]; framesUsed if given.
std::vector<double> averagedPowerCepstrum(const float* mono, std::size_t n, int frameSize,
                                          double dropQuietFraction, int* framesUsed = nullptr);

/// Echo-stage settings that cancel an estimate (method and terms as given).
EchoCancelSettings echoSettingsFromEstimate(const EchoEstimate& estimate, EchoMethod method,
                                            int terms = 4);

} // namespace kerf::dsp
