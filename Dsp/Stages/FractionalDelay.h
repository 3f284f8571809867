#pragma once
// Fractional-delay interpolators: Lagrange FIR taps and Thiran all-pass coefficients
// (T. I. Laakso, V. Valimaki, M. Karjalainen, U. K. Laine, "Splitting the Unit Delay",
// IEEE Signal Processing Magazine 13(1), 1996), plus a value-and-derivative type that the
// comb and echo stages use to evaluate H(e^{j omega}) and its exact group delay.
// Pure functions; nothing here allocates.
#include <complex>

namespace kerf::dsp
{

/// Highest Lagrange interpolation order accepted (taps = order + 1).
inline constexpr int kMaxLagrangeOrder = 31;
/// Highest Thiran all-pass order accepted.
inline constexpr int kMaxThiranOrder = 5;

/// Which fractional-delay interpolator a delay line uses.
enum class DelayInterpolation
{
    lagrange, ///< FIR, order 1..kMaxLagrangeOrder (odd orders are centred best)
    thiran    ///< all-pass, order 1..kMaxThiranOrder (flat magnitude, maximally flat delay)
};

/// Lagrange interpolation taps h[0..order] for a delay of delaySamples (best accuracy for
/// delaySamples near order/2). h[k] = prod_{i != k} (D - i)/(k - i) (Laakso et al. 1996,
/// eq. 42). order in 1..kMaxLagrangeOrder; taps must hold order + 1 values.
void lagrangeTaps(double delaySamples, int order, double* taps) noexcept;

/// d h[k] / d delaySamples of the Lagrange taps (same layout as lagrangeTaps); used for
/// sub-sample delay refinement.
void lagrangeTapDerivatives(double delaySamples, int order, double* dtaps) noexcept;

/// Thiran all-pass denominator a[0..order] (a[0] = 1) for a delay of delaySamples:
/// a_k = (-1)^k C(order, k) prod_{n=0}^{order} (D - order + n)/(D - order + k + n)
/// (Laakso et al. 1996, eq. 86). H(z) = z^-order A(1/z) / A(z); its group delay at DC is
/// exactly D; stable for D > order - 1. a must hold order + 1 values.
void thiranCoefficients(double delaySamples, int order, double* a) noexcept;

/// A delay split into a whole-sample part and the part realised by an interpolator.
struct DelaySplit
{
    int wholeSamples = 0;           ///< plain delay-line offset, samples
    double interpolatorSamples = 0; ///< delay given to the interpolator, samples
};

/// Splits delaySamples for an interpolator of the given kind and order so that the
/// interpolator works in its accurate range (Lagrange: [(N-1)/2, (N+1)/2); Thiran:
/// [N - 1/2, N + 1/2)), with at least minWholeSamples of plain delay (1 inside a feedback
/// loop). If the delay is too short for that, the whole part is held at minWholeSamples
/// and the interpolator takes the rest (Thiran: never below N - 1/2, which lengthens the
/// delay; see minimumDelaySamples).
DelaySplit splitDelay(double delaySamples, DelayInterpolation kind, int order,
                      int minWholeSamples) noexcept;

/// Shortest total delay, in samples, that splitDelay realises without lengthening it.
double minimumDelaySamples(DelayInterpolation kind, int order, int minWholeSamples) noexcept;

/// A frequency-response value H(e^{j omega}) with its derivative dH/domega. Products,
/// sums and quotients carry the derivative exactly, so group delay = -Im(dH/H).
struct ResponseValue
{
    std::complex<double> h{1.0, 0.0};  ///< H(e^{j omega})
    std::complex<double> dh{0.0, 0.0}; ///< dH/domega, omega in radians per sample

    /// Group delay in samples, -d arg(H)/d omega.
    double groupDelaySamples() const noexcept;
};

ResponseValue operator+(const ResponseValue& a, const ResponseValue& b) noexcept;
ResponseValue operator-(const ResponseValue& a, const ResponseValue& b) noexcept;
ResponseValue operator*(const ResponseValue& a, const ResponseValue& b) noexcept;
ResponseValue operator/(const ResponseValue& a, const ResponseValue& b) noexcept;
ResponseValue operator*(double s, const ResponseValue& a) noexcept;

/// A constant (derivative zero).
ResponseValue responseConstant(std::complex<double> value) noexcept;

/// sum_k c[k] e^{-j omega (offset + k)}, k = 0..count-1, with its derivative: an FIR with
/// taps c placed after a plain delay of offset samples.
ResponseValue firResponse(const double* c, int count, double offset, double omega) noexcept;

/// H of a fractional delay of delaySamples realised as splitDelay(...) does: whole-sample
/// delay times the interpolator (Lagrange FIR or Thiran all-pass), exactly.
ResponseValue fractionalDelayResponse(double delaySamples, DelayInterpolation kind, int order,
                                      int minWholeSamples, double omega) noexcept;

} // namespace kerf::dsp
