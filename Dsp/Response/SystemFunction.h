#pragma once
// Evaluation of a chain's exact system function H(z): the display and the tests use this,
// the audio path realises the same sections.
#include "../Chain.h"

#include <complex>
#include <vector>

namespace kerf::dsp
{

/// H(e^{j omega}) of one section; omega in radians per sample.
std::complex<double> evaluateSection(const BiquadCoeffs& c, double omega) noexcept;

/// Group delay of one section in samples at omega: -d(arg H)/d(omega), computed
/// analytically as Re(sum k b_k e^{-j omega k} / B) - Re(sum k a_k e^{-j omega k} / A).
double sectionGroupDelay(const BiquadCoeffs& c, double omega) noexcept;

/// H(e^{j omega}) of a whole chain at the given sample rate.
std::complex<double> evaluateChain(const ChainSpec& chain, double sampleRateHz,
                                   double freqHz) noexcept;

/// One point of a frequency response.
struct ResponsePoint
{
    double freqHz = 0.0;
    double magnitudeDb = 0.0;
    double phaseDeg = 0.0; ///< unwrapped along the given (ascending) frequencies
    double groupDelaySamples = 0.0;
};

/// Magnitude, unwrapped phase and group delay of the chain at each frequency.
/// freqsHz should ascend for the phase unwrapping to be meaningful.
std::vector<ResponsePoint> chainResponse(const ChainSpec& chain, double sampleRateHz,
                                         const std::vector<double>& freqsHz);

/// n log-spaced frequencies from lowHz to highHz inclusive.
std::vector<double> logSpacedFrequencies(double lowHz, double highHz, int n);

/// The chain's impulse response, rendered through ChainProcessor in double precision.
std::vector<double> impulseResponse(const ChainSpec& chain, double sampleRateHz, int length);

} // namespace kerf::dsp
