#pragma once
// Evaluation of a chain's exact system function H(z): the display and the tests use this,
// the audio path realises the same sections.
//
// A stage on both channels multiplies each channel by its H. A stage on one channel, or on
// mid or side, makes the chain a two-by-two system; a "view" picks one path through it:
// left -> left and right -> right in the L/R basis, mid -> mid and side -> side in the M/S
// basis (M = (L + R)/2, S = (L - R)/2), each with the other input silent. When every stage
// is on both channels, all four views are the same H.
#include "../Chain.h"

#include <complex>
#include <string>
#include <vector>

namespace kerf::dsp
{

/// Which path of a stereo chain to evaluate (see the file comment).
enum class ChannelView
{
    left,
    right,
    mid,
    side,
};

/// True when the view's path is a plain product of stage responses (no mid/side stage, and no
/// left/right stage seen through a mid/side view); then stageInView() says which stages count.
bool viewIsProduct(const ChainSpec& chain, ChannelView view) noexcept;
/// Whether a stage with this channel mode lies on a product view's path.
bool stageInView(ChannelMode mode, ChannelView view) noexcept;

/// H(e^{j omega}) of one section; omega in radians per sample.
std::complex<double> evaluateSection(const BiquadCoeffs& c, double omega) noexcept;

/// Group delay of one section in samples at omega: -d(arg H)/d(omega), computed
/// analytically as Re(sum k b_k e^{-j omega k} / B) - Re(sum k a_k e^{-j omega k} / A).
double sectionGroupDelay(const BiquadCoeffs& c, double omega) noexcept;

/// H(e^{j omega}) of a whole chain along a view, at the given sample rate.
std::complex<double> evaluateChain(const ChainSpec& chain, double sampleRateHz, double freqHz,
                                   ChannelView view = ChannelView::left) noexcept;

/// One point of a frequency response.
struct ResponsePoint
{
    double freqHz = 0.0;
    double magnitudeDb = 0.0;
    double phaseDeg = 0.0; ///< unwrapped along the given (ascending) frequencies
    double groupDelaySamples = 0.0;
};

/// Magnitude, unwrapped phase and group delay of the chain along a view at each frequency.
/// freqsHz should ascend for the phase unwrapping to be meaningful. Group delay is exact:
/// -Im(H'/H) with H' carried analytically through every product and sum.
std::vector<ResponsePoint> chainResponse(const ChainSpec& chain, double sampleRateHz,
                                         const std::vector<double>& freqsHz,
                                         ChannelView view = ChannelView::left);

/// Magnitude in dB only, the fast path for drawing: |H|^2 of each section from real
/// arithmetic in phi = sin^2(omega/2) (M. Vicanek, "Matched Second Order Digital Filters",
/// 2016, eq. for |H|^2), vectorised across frequencies. Falls back to chainResponse when a
/// mid/side stage makes the view a sum rather than a product, or the chain holds an echo
/// canceller or a comb (not sections).
void chainMagnitudeDb(const ChainSpec& chain, double sampleRateHz, const double* freqsHz,
                      double* magnitudeDbOut, int count, ChannelView view = ChannelView::left);

/// Magnitude in dB of a product of sections, the kernel of chainMagnitudeDb: one sine per
/// frequency, then ten real operations per section and frequency, vectorised across
/// frequencies. Non-realtime (allocates scratch).
void sectionsMagnitudeDb(const BiquadCoeffs* sections, int numSections, double sampleRateHz,
                         const double* freqsHz, double* magnitudeDbOut, int count);

/// n log-spaced frequencies from lowHz to highHz inclusive.
std::vector<double> logSpacedFrequencies(double lowHz, double highHz, int n);

/// The chain's impulse response along a view, rendered through ChainProcessor in double
/// precision (stereo, so channel modes act as they do in the plugin).
std::vector<double> impulseResponse(const ChainSpec& chain, double sampleRateHz, int length,
                                    ChannelView view = ChannelView::left);

/// Poles, zeros and gain of a rational function in z (H = gain * prod(1 - z_i/z) /
/// prod(1 - p_i/z)), the same convention as scipy.signal.tf2zpk.
struct PoleZero
{
    std::vector<std::complex<double>> zeros, poles;
    double gain = 1.0;
    bool listed = true; ///< false when the roots were not computed (see note)
    std::string note;
};

/// Highest polynomial degree whose roots stagePolesZeros computes (an echo model's degree
/// is its longest delay in samples; a dense eigen-solve beyond this is too slow to be useful).
inline constexpr int kMaxRootDegree = 600;

/// How long, in seconds, the chain's impulse response takes to fall 60 dB below its start
/// (what a host should keep processing after the input stops): per stage, from the radius
/// of its slowest pole (sections), ln(1e-3)/ln|g| loops of its delay (feedback combs), or
/// the model's decay bound (echo cancellers); stages in series add up. Capped at 60 s.
double chainTailSeconds(const ChainSpec& chain, double sampleRateHz);

/// Roots of c[0] x^n + c[1] x^(n-1) + ... + c[n] (leading zeros dropped), from the
/// eigenvalues of the companion matrix (Eigen), as numpy.roots computes them.
std::vector<std::complex<double>> polynomialRoots(const std::vector<double>& c);

/// Poles and zeros of one stage's own H(z) (its sections' roots together); a first-order
/// section contributes one pole and one zero. An exact echo canceller 1/P(z) has the roots
/// of P as poles and as many zeros at the origin, listed up to kMaxRootDegree.
PoleZero stagePolesZeros(const StageSpec& spec, double sampleRateHz);

} // namespace kerf::dsp
