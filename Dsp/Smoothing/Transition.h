#pragma once
// The click-free layer's vocabulary: how fast settings move, the shape of every move, and
// which changes glide and which crossfade. Pure values and functions, no allocation.
//
// Two mechanisms carry every change of a running chain:
//  - glide: a section's realised parameters move sample by sample along a smooth curve in
//    their natural domain (log pole frequency, log damping = -log Q, numerator gains in dB
//    where they keep their sign). The trapezoidal SVF stays stable under any such motion
//    (its state norm never grows; A. Wishnick, DAFx-14, 2014; J. Laroche, JAES 55(6), 2007;
//    tested). Used for moderate moves of frequency, gain, Q and slope.
//  - crossfade: a second instance of the stage starts at the new settings. The input of the
//    old instance fades out (and its deviation from the dry signal with it) while the input
//    of the new one fades in: y = x + (1 - s) G_old((1 - s) x) + G_new(s x), G = H - 1.
//    Each instance is an LTI filter fed a smoothly faded signal, so nothing new appears in
//    the spectrum beyond the fade's own narrow band, and no filter starts with a jump at its
//    input. Used for what cannot move continuously (type, order, channels, enable, comb and
//    echo delays) and for jumps too large to glide: sweeping a resonance quickly through the
//    signal's own frequency releases its stored energy at the new pole frequency (measured
//    while building this layer: a +18 dB, q 10 peak swept 100 Hz -> 10 kHz in 20 ms under a
//    100 Hz sine leaves -4 dBFS above 1 kHz; the same move as a crossfade, -124 dBFS).
#include "../Stages/SvfSection.h"

#include <algorithm>

namespace kerf::dsp
{

struct StageSpec;

/// Default glide and crossfade time, ms.
inline constexpr double kDefaultGlideMs = 20.0;
/// Longest glide time the user can set, ms.
inline constexpr double kMaxGlideMs = 1000.0;
/// Shortest crossfade that stays clean: a glide time of 0 ("as fast as possible") means
/// this for crossfades. Measured while building the layer: a full-range crossfade under a 100 Hz
/// sine at -6 dBFS leaves -63 dBFS above 1 kHz at 3 ms, -85 dBFS at 5 ms and -112 dBFS at 10 ms.
inline constexpr double kMinTransitionMs = 6.0;
/// Shortest glide that stays clean: a glide time below this glides over this. Measured
/// (Tests/Dsp/SmoothingTests.cpp, 8 sections moving by up to an octave, 11.5 dB and a factor
/// of two in Q under a 100 Hz sine at -6 dBFS, worst 10 ms above 1 kHz): -63 dBFS when the
/// move takes 6 ms, -81 at 10 ms, -100 at 20 ms; the knot interval no longer matters there
/// (the move's own speed does).
inline constexpr double kMinGlideMs = 12.0;
/// Samples between updates of moving settings (coefficients are interpolated per sample in
/// between); targets taken between updates wait for the next one.
inline constexpr int kUpdateIntervalSamples = 32;
/// Fewest knot intervals a glide has (glideKnotSamples): as many as the shortest glide
/// (kMinGlideMs at 48 kHz, 576 samples) has with knots every kUpdateIntervalSamples, the
/// case the splatter bar is measured at.
inline constexpr int kMinKnotsPerGlide = 18;
/// Longest knot interval, samples.
inline constexpr int kMaxKnotSamples = 4 * kUpdateIntervalSamples;

/// Samples between the knots of a glide `glideSamples` long: the longest of 32, 64 and 128
/// that leaves at least kMinKnotsPerGlide intervals. Between knots each coefficient follows
/// a Hermite cubic through the path's exact values and slopes, whose error is at most
/// K^4/384 max|f''''| (f the coefficient along the path; the cubic Hermite error bound,
/// a standard numerical-analysis result, from memory). For a given move f is a fixed
/// function of the smoothstep at n/T, so f'''' scales as 1/T^4 and the error as (K/T)^4:
/// K/T no larger than at the shortest glide keeps the error no larger than there
/// (measured: 25 ms glides with knots every 64 samples splatter less than 12 ms glides with
/// knots every 32).
constexpr int glideKnotSamples(int glideSamples) noexcept
{
    int k = kUpdateIntervalSamples;
    while (2 * k <= kMaxKnotSamples && 2 * k * kMinKnotsPerGlide <= glideSamples)
        k *= 2;
    return k;
}

/// The transition curve s(t) on [0, 1]: the C3 "smoothstep" polynomial
/// 35 t^4 - 84 t^5 + 70 t^6 - 20 t^7 (its first three derivatives vanish at both ends, so
/// its spectrum falls as 1/f^5; common practice for smooth interpolation, from memory).
constexpr double transitionCurve(double t) noexcept
{
    if (t <= 0.0)
        return 0.0;
    if (t >= 1.0)
        return 1.0;
    const double t2 = t * t;
    return t2 * t2 * (35.0 + t * (-84.0 + t * (70.0 - 20.0 * t)));
}

/// ds/dt of transitionCurve: 140 t^3 (1 - t)^3.
constexpr double transitionSlope(double t) noexcept
{
    if (t <= 0.0 || t >= 1.0)
        return 0.0;
    const double a = t * (1.0 - t);
    return 140.0 * a * a * a;
}

/// The bend shape B(t) = t (1 - t)^4 on [0, 1]: B(0) = 0 and B'(0) = 1, while B and its
/// first three derivatives vanish at t = 1 (the factor (1 - t)^4), so a glide that starts
/// with a velocity adds bend * B(t) to its smoothstep path and still lands as the
/// smoothstep does (a polynomial with those end conditions, common practice). Its largest
/// value, at t = 1/5, is 4^4/5^5 = 0.082.
constexpr double bendCurve(double t) noexcept
{
    if (t <= 0.0 || t >= 1.0)
        return 0.0;
    const double u = 1.0 - t;
    return t * (u * u) * (u * u);
}

/// dB/dt of bendCurve: (1 - t)^3 (1 - 5 t); 1 at t = 0, 0 at t = 1.
constexpr double bendSlope(double t) noexcept
{
    if (t >= 1.0)
        return 0.0;
    const double u = 1.0 - std::max(t, 0.0);
    return u * u * u * (1.0 - 5.0 * std::max(t, 0.0));
}

/// Length of a move in samples for a glide time (ms) at a rate: at least kMinTransitionMs,
/// rounded up to whole update intervals.
int transitionSamples(double glideMs, double sampleRateHz) noexcept;

/// A section's realised parameters in their natural domain: log of the SVF tuning g
/// (= tan(pi f_pole / fs), so log g moves with log frequency), log of the damping k
/// (= 1/Q of the poles), and the numerator's weights of the high, band and low outputs.
struct SvfNatural
{
    double logG = 0.0, logK = 0.0, mHigh = 1.0, mBand = 0.0, mLow = 1.0;
};

/// Natural form of realised SVF coefficients (g > 0, k > 0 as toSvf makes them).
SvfNatural toNatural(const SvfCoeffs& c) noexcept;
/// The point a fraction s of the way from a to b: log g and log k linearly (log frequency,
/// log Q), the high and low weights (the gains at Nyquist and DC) in log magnitude when both
/// ends share a sign, else linearly, the band weight linearly.
SvfNatural blend(const SvfNatural& a, const SvfNatural& b, double s) noexcept;
/// Processing coefficients of a natural point.
SvfCoeffs fromNatural(const SvfNatural& n) noexcept;

/// A glide from a to b over the time fraction t in [0, 1], prepared once, so that each point
/// along it costs four exponentials and a division (the logarithms blend() takes at every
/// call are taken here, once). In the path's coordinates (log g, log k, the high and low
/// weights in dB when both ends share a sign, else linear, the band weight linearly) the
/// point at t is from + (to - from) s(t) + bend B(t), s the transition curve and B the bend
/// shape: a glide that starts from rest (bend 0) is blend(a, b, s(t)); a glide that takes
/// over a running one starts with its velocity (bend = that velocity in these coordinates
/// per unit t), so the section's values and slopes run on without a kink.
struct GlidePath
{
    SvfNatural from, to;
    double signHigh = 1.0, signLow = 1.0; // the weights' shared sign when they move in dB
    /// The path's coordinates: 0 log g, 1 log k, 2 the high weight (log |mHigh| when it
    /// moves in dB, else mHigh), 3 the band weight, 4 the low weight (as the high). The
    /// coordinate at t is base + step s(t) + bend B(t); bend is the start velocity d/dt.
    double base[5] = {}, step[5] = {}, bend[5] = {};
    /// Whether the high (low) weight moves in dB: both ends share a sign and it moves.
    bool dbHigh = false, dbLow = false;
    /// The bend acts over the first `bendSpan` of the glide: bend bendSpan B(t / bendSpan)
    /// (B and its first three derivatives vanish at the span's end, so the path stays C3).
    double bendSpan = 1.0, invBendSpan = 1.0;

    GlidePath() = default;
    /// A glide from rest.
    GlidePath(const SvfNatural& a, const SvfNatural& b) noexcept;
    /// A glide that starts with `velocity`: d/dt at t = 0 of log g, log k and of the plain
    /// weights mHigh, mBand, mLow (as velocityAt gives them), spent over the first `span`
    /// (0 < span <= 1) of the glide. The bend's largest excursion is 0.082 span |velocity|:
    /// a glide that takes over a shorter one gives its velocity the old glide's length
    /// (span = old length / new length), so the excursion stays a fraction of the old move.
    /// A weight whose excursion in dB would pass 6 dB (its magnitude near zero) moves
    /// linearly instead.
    GlidePath(const SvfNatural& a, const SvfNatural& b, const SvfNatural& velocity,
              double span = 1.0) noexcept;
    /// The natural point at time fraction t (blend(from, to, s(t)) without a bend).
    SvfNatural at(double t) const noexcept;
    /// d/dt of the natural point at t: of log g, log k and the plain weights.
    SvfNatural velocityAt(double t) const noexcept;
    /// Processing coefficients at t.
    SvfCoeffs coeffsAt(double t) const noexcept;
    /// The folded kernel values (a1, a2, g, c0, c1, c2; Chain.cpp) at t and their
    /// derivatives with respect to t, exact (chain rule through s(t), B(t), the
    /// exponentials and a1 = 1 / (1 + g (g + k))).
    void foldedAt(double t, double value[6], double slope[6]) const noexcept;
};

/// foldedAt for up to four paths at once: the exponentials and the division of all four in
/// one vector each where the CPU has AVX and FMA (otherwise one path at a time). Values
/// agree with foldedAt to a few units in the last place.
void foldedAtBatch(const GlidePath* const* paths, const double* t, int count, double (*value)[6],
                   double (*slope)[6]) noexcept;

/// Whether a section stage may glide from settings a to b (same structure, moderate move:
/// frequency within an octave, gain within 12 dB, Q and slope within a factor of two);
/// otherwise the change crossfades. Both must be enabled section stages.
bool sectionsCanGlide(const StageSpec& a, const StageSpec& b) noexcept;

/// A stage's settings carried along the same curve as its sections' glides, so that a new
/// target is judged from where the stage is rather than from the last target (a short glide
/// that takes over a long one that had barely begun would otherwise make a move larger than
/// any glide may make; Chain.cpp). Coordinates: log2 of the frequency, the gain in dB, log2
/// of q (q itself when it is 0, the pass alignment's own) and log2 of the slope; each is
/// base + step s(t) + bend span B(t / span), as GlidePath's coordinates are.
struct SettingsPath
{
    double base[4] = {}, step[4] = {}, bend[4] = {};
    double bendSpan = 1.0, invBendSpan = 1.0;

    SettingsPath() = default;
    /// From coordinates a (moving at `velocity` per unit t) to b, the bend spent over the
    /// first `span` of the glide (as GlidePath).
    SettingsPath(const double a[4], const double b[4], const double velocity[4],
                 double span) noexcept;
    /// The coordinates, their rates d/dt and (if `rate2` is given) d2/dt2 at time fraction t.
    void at(double t, double x[4], double rate[4], double* rate2 = nullptr) const noexcept;
    /// The coordinates of settings s.
    static void coordinates(const StageSpec& s, double x[4]) noexcept;
};

/// Whether a section stage keeps what a glide cannot change (sectionsCanGlide without the
/// limits on the move).
bool sectionsKeepStructure(const StageSpec& a, const StageSpec& b) noexcept;

/// The limits of sectionsCanGlide on a move between SettingsPath coordinates a and b:
/// `reach` is, in the same coordinates, the further move that would demand as much of the
/// glide as the jump in acceleration where it takes over a running one (Chain.cpp,
/// retarget); the move plus that must stay within the limits.
bool glideMoveWithin(const double a[4], const double b[4], const double reach[4]) noexcept;

} // namespace kerf::dsp
