#include "SystemFunction.h"

#include <Eigen/Eigenvalues>

#include <algorithm>
#include <cmath>
#include <memory>
#include <numbers>

namespace kerf::dsp
{

namespace
{
using cd = std::complex<double>;
constexpr double kPi = std::numbers::pi;

/// Smallest magnitude drawn or printed, so that exact nulls stay finite (-400 dB).
constexpr double kFloorMagnitude = 1.0e-20;

/// A value and its derivative with respect to omega.
struct Dual
{
    cd v{1.0, 0.0}, d{0.0, 0.0};
};

Dual operator*(const Dual& a, const Dual& b)
{
    return {a.v * b.v, a.d * b.v + a.v * b.d};
}
Dual operator+(const Dual& a, const Dual& b)
{
    return {a.v + b.v, a.d + b.d};
}

/// H and dH/domega of one section.
Dual sectionDual(const BiquadCoeffs& c, double omega)
{
    const cd z1 = std::polar(1.0, -omega), z2 = z1 * z1;
    const cd j(0.0, 1.0);
    const cd n = c.b0 + c.b1 * z1 + c.b2 * z2;
    const cd nd = -j * (c.b1 * z1 + 2.0 * c.b2 * z2);
    const cd d = 1.0 + c.a1 * z1 + c.a2 * z2;
    const cd dd = -j * (c.a1 * z1 + 2.0 * c.a2 * z2);
    return {n / d, (nd * d - n * dd) / (d * d)};
}

/// Two-by-two matrix of duals, the L/R transfer of a stage or chain.
struct Matrix2
{
    Dual m[2][2] = {{Dual{}, Dual{cd{}, cd{}}}, {Dual{cd{}, cd{}}, Dual{}}};
};

Matrix2 multiply(const Matrix2& a, const Matrix2& b)
{
    Matrix2 r;
    for (int i = 0; i < 2; ++i)
        for (int k = 0; k < 2; ++k)
            r.m[i][k] = a.m[i][0] * b.m[0][k] + a.m[i][1] * b.m[1][k];
    return r;
}

/// The designed sections of every enabled stage, with its channel mode; an echo stage
/// carries its settings instead.
struct DesignedStage
{
    ChannelMode mode;
    StageSections sections;
    const StageSpec* echo = nullptr; // echo_cancel or comb stage, evaluated by its own header
};

/// H and dH/domega of an echo-cancellation stage (causal or, offline, non-causal) or a comb.
Dual echoDual(const StageSpec& spec, double fs, double omega)
{
    if (spec.type == StageType::comb)
    {
        const ResponseValue c = combResponseValue(spec.comb, fs, omega);
        return {c.h, c.dh};
    }
    const ResponseValue r = spec.nonCausal ? echoNonCausalResponseValue(spec.echo, fs, omega)
                                           : echoCancelResponseValue(spec.echo, fs, omega);
    return {r.h, r.dh};
}

std::vector<DesignedStage> designAll(const ChainSpec& chain, double fs)
{
    std::vector<DesignedStage> out;
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& spec = chain.stages[static_cast<std::size_t>(i)];
        if (!spec.enabled)
            continue;
        if (spec.type == StageType::echoCancel || spec.type == StageType::comb)
        {
            out.push_back({ChannelMode::both, {}, &spec});
            continue;
        }
        auto s = designStage(spec, fs);
        if (s.count > 0)
            out.push_back({spec.channels, s, nullptr});
    }
    return out;
}

/// The view's path through the chain at omega: value and derivative.
Dual evaluateView(const std::vector<DesignedStage>& stages, double fs, double omega,
                  ChannelView view)
{
    Matrix2 total;
    for (const auto& st : stages)
    {
        Dual h;
        if (st.echo != nullptr)
            h = echoDual(*st.echo, fs, omega);
        for (int j = 0; j < st.sections.count; ++j)
            h = h * sectionDual(st.sections.sections[static_cast<std::size_t>(j)], omega);
        const Dual one{};
        const Dual half{cd{0.5, 0.0}, cd{}};
        const Dual hPlus = half * (h + one);
        const Dual hMinus = half * (h + Dual{cd{-1.0, 0.0}, cd{}});
        const Dual oneMinusH = half * (one + Dual{-h.v, -h.d});
        Matrix2 m;
        switch (st.mode)
        {
        case ChannelMode::both:
            m.m[0][0] = h;
            m.m[1][1] = h;
            break;
        case ChannelMode::left:
            m.m[0][0] = h;
            break;
        case ChannelMode::right:
            m.m[1][1] = h;
            break;
        case ChannelMode::mid: // L/R of T^-1 diag(H, 1) T
            m.m[0][0] = hPlus;
            m.m[0][1] = hMinus;
            m.m[1][0] = hMinus;
            m.m[1][1] = hPlus;
            break;
        case ChannelMode::side: // L/R of T^-1 diag(1, H) T
            m.m[0][0] = hPlus;
            m.m[0][1] = oneMinusH;
            m.m[1][0] = oneMinusH;
            m.m[1][1] = hPlus;
            break;
        }
        total = multiply(m, total);
    }
    const auto& t = total.m;
    const Dual half{cd{0.5, 0.0}, cd{}};
    switch (view)
    {
    case ChannelView::left:
        return t[0][0];
    case ChannelView::right:
        return t[1][1];
    case ChannelView::mid: // (T M T^-1)[0][0]
        return half * (t[0][0] + t[0][1] + t[1][0] + t[1][1]);
    case ChannelView::side: // (T M T^-1)[1][1]
        return half *
               (t[0][0] + Dual{-t[0][1].v, -t[0][1].d} + Dual{-t[1][0].v, -t[1][0].d} + t[1][1]);
    }
    return t[0][0];
}

bool viewIsProductImpl(const ChainSpec& chain, ChannelView view)
{
    bool hasLeftRight = false;
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        if (!s.enabled)
            continue;
        if (s.channels == ChannelMode::mid || s.channels == ChannelMode::side)
            return false;
        if (s.channels == ChannelMode::left || s.channels == ChannelMode::right)
            hasLeftRight = true;
    }
    return !(hasLeftRight && (view == ChannelView::mid || view == ChannelView::side));
}

bool stageInProductView(ChannelMode mode, ChannelView view)
{
    switch (mode)
    {
    case ChannelMode::both:
        return true;
    case ChannelMode::left:
        return view == ChannelView::left;
    case ChannelMode::right:
        return view == ChannelView::right;
    default:
        return false;
    }
}
} // namespace

bool viewIsProduct(const ChainSpec& chain, ChannelView view) noexcept
{
    return viewIsProductImpl(chain, view);
}

bool stageInView(ChannelMode mode, ChannelView view) noexcept
{
    return stageInProductView(mode, view);
}

std::complex<double> evaluateSection(const BiquadCoeffs& c, double omega) noexcept
{
    const cd z1 = std::polar(1.0, -omega);
    const cd z2 = z1 * z1;
    return (c.b0 + c.b1 * z1 + c.b2 * z2) / (1.0 + c.a1 * z1 + c.a2 * z2);
}

double sectionGroupDelay(const BiquadCoeffs& c, double omega) noexcept
{
    const cd z1 = std::polar(1.0, -omega);
    const cd z2 = z1 * z1;
    const cd num = c.b0 + c.b1 * z1 + c.b2 * z2;
    const cd numRamp = c.b1 * z1 + 2.0 * c.b2 * z2;
    const cd den = 1.0 + c.a1 * z1 + c.a2 * z2;
    const cd denRamp = c.a1 * z1 + 2.0 * c.a2 * z2;
    double tau = 0.0;
    if (std::abs(num) > 0.0)
        tau += (numRamp / num).real();
    if (std::abs(den) > 0.0)
        tau -= (denRamp / den).real();
    return tau;
}

std::complex<double> evaluateChain(const ChainSpec& chain, double sampleRateHz, double freqHz,
                                   ChannelView view) noexcept
{
    const double omega = 2.0 * kPi * freqHz / sampleRateHz;
    if (viewIsProductImpl(chain, view))
    {
        cd h = 1.0;
        for (int i = 0; i < chain.numStages; ++i)
        {
            const auto& spec = chain.stages[static_cast<std::size_t>(i)];
            if (spec.enabled && !isSectionType(spec.type))
            {
                h *= echoDual(spec, sampleRateHz, omega).v;
                continue;
            }
            if (!stageInProductView(spec.channels, view))
                continue;
            const StageSections s = designStage(spec, sampleRateHz);
            for (int j = 0; j < s.count; ++j)
                h *= evaluateSection(s.sections[static_cast<std::size_t>(j)], omega);
        }
        return h;
    }
    return evaluateView(designAll(chain, sampleRateHz), sampleRateHz, omega, view).v;
}

std::vector<ResponsePoint> chainResponse(const ChainSpec& chain, double sampleRateHz,
                                         const std::vector<double>& freqsHz, ChannelView view)
{
    const auto stages = designAll(chain, sampleRateHz);
    std::vector<ResponsePoint> out;
    out.reserve(freqsHz.size());
    double previousWrapped = 0.0, offset = 0.0;
    for (std::size_t i = 0; i < freqsHz.size(); ++i)
    {
        const double omega = 2.0 * kPi * freqsHz[i] / sampleRateHz;
        const Dual h = evaluateView(stages, sampleRateHz, omega, view);
        // Unwrap as numpy.unwrap does: remove jumps larger than pi between neighbours.
        const double wrapped = std::arg(h.v);
        if (i > 0)
        {
            const double d = wrapped - previousWrapped;
            if (d > kPi)
                offset -= 2.0 * kPi * std::floor((d + kPi) / (2.0 * kPi));
            else if (d < -kPi)
                offset += 2.0 * kPi * std::floor((-d + kPi) / (2.0 * kPi));
        }
        previousWrapped = wrapped;

        ResponsePoint p;
        p.freqHz = freqsHz[i];
        const double mag = std::abs(h.v);
        p.magnitudeDb = 20.0 * std::log10(std::max(mag, kFloorMagnitude));
        p.phaseDeg = (wrapped + offset) * 180.0 / kPi;
        // tau = -d(arg H)/domega = -Im(H'/H).
        p.groupDelaySamples = mag > 0.0 ? -(h.d / h.v).imag() : 0.0;
        out.push_back(p);
    }
    return out;
}

void chainMagnitudeDb(const ChainSpec& chain, double sampleRateHz, const double* freqsHz,
                      double* magnitudeDbOut, int count, ChannelView view)
{
    if (count <= 0)
        return;
    // Echo cancellers and combs are not sections: the exact evaluation carries them.
    bool hasDelayStage = false;
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        hasDelayStage =
            hasDelayStage ||
            (s.enabled && (s.type == StageType::echoCancel || s.type == StageType::comb));
    }
    if (hasDelayStage || !viewIsProductImpl(chain, view))
    {
        const auto points =
            chainResponse(chain, sampleRateHz, std::vector<double>(freqsHz, freqsHz + count), view);
        for (int i = 0; i < count; ++i)
            magnitudeDbOut[i] = points[static_cast<std::size_t>(i)].magnitudeDb;
        return;
    }
    std::vector<BiquadCoeffs> sections;
    for (int st = 0; st < chain.numStages; ++st)
    {
        const auto& spec = chain.stages[static_cast<std::size_t>(st)];
        if (!stageInProductView(spec.channels, view))
            continue;
        const StageSections s = designStage(spec, sampleRateHz);
        for (int j = 0; j < s.count; ++j)
            sections.push_back(s.sections[static_cast<std::size_t>(j)]);
    }
    sectionsMagnitudeDb(sections.data(), static_cast<int>(sections.size()), sampleRateHz, freqsHz,
                        magnitudeDbOut, count);
}

void sectionsMagnitudeDb(const BiquadCoeffs* sections, int numSections, double sampleRateHz,
                         const double* freqsHz, double* magnitudeDbOut, int count)
{
    if (count <= 0)
        return;
    const auto n = static_cast<std::size_t>(count);
    std::vector<double> phi(n), num(n, 1.0), den(n, 1.0);
    for (std::size_t i = 0; i < n; ++i)
    {
        const double s = std::sin(kPi * freqsHz[i] / sampleRateHz);
        phi[i] = s * s;
    }
    for (int j = 0; j < numSections; ++j)
    {
        const BiquadCoeffs& c = sections[j];
        // |b0 + b1 z^-1 + b2 z^-2|^2 = (b0+b1+b2)^2 - 4(b0 b1 + b1 b2 + 4 b0 b2) phi
        //                              + 16 b0 b2 phi^2, phi = sin^2(omega/2).
        const double nb = (c.b0 + c.b1 + c.b2) * (c.b0 + c.b1 + c.b2);
        const double n1 = -4.0 * (c.b0 * c.b1 + c.b1 * c.b2 + 4.0 * c.b0 * c.b2);
        const double n2 = 16.0 * c.b0 * c.b2;
        const double da = (1.0 + c.a1 + c.a2) * (1.0 + c.a1 + c.a2);
        const double d1 = -4.0 * (c.a1 + c.a1 * c.a2 + 4.0 * c.a2);
        const double d2 = 16.0 * c.a2;
        double* __restrict pn = num.data();
        double* __restrict pd = den.data();
        const double* __restrict pp = phi.data();
        for (std::size_t i = 0; i < n; ++i)
        {
            const double p = pp[i];
            pn[i] *= nb + p * (n1 + p * n2);
            pd[i] *= da + p * (d1 + p * d2);
        }
    }
    constexpr double floorSquared = kFloorMagnitude * kFloorMagnitude;
    for (std::size_t i = 0; i < n; ++i)
        magnitudeDbOut[i] = 10.0 * std::log10(std::max(std::abs(num[i] / den[i]), floorSquared));
}

std::vector<double> logSpacedFrequencies(double lowHz, double highHz, int n)
{
    std::vector<double> f;
    if (n <= 0)
        return f;
    f.reserve(static_cast<std::size_t>(n));
    if (n == 1)
    {
        f.push_back(lowHz);
        return f;
    }
    const double lo = std::log(lowHz), hi = std::log(highHz);
    for (int i = 0; i < n; ++i)
        f.push_back(std::exp(lo + (hi - lo) * i / (n - 1)));
    return f;
}

std::vector<double> impulseResponse(const ChainSpec& chain, double sampleRateHz, int length,
                                    ChannelView view)
{
    const auto len = static_cast<std::size_t>(std::max(length, 0));
    std::vector<double> l(len, 0.0), r(len, 0.0);
    if (len == 0)
        return l;
    // The view's unit input: left (1, 0), right (0, 1), mid (1, 1), side (1, -1).
    l[0] = view == ChannelView::right ? 0.0 : 1.0;
    r[0] = view == ChannelView::left ? 0.0 : (view == ChannelView::side ? -1.0 : 1.0);
    // A ChainProcessor holds every slot's state inline (about 0.6 MB): on the heap, since
    // this runs on the editor's view threads too.
    const auto p = std::make_unique<ChainProcessor>();
    p->prepare(sampleRateHz, length, 2);
    p->setChain(chain);
    double* channels[2] = {l.data(), r.data()};
    p->process(channels, 2, length);
    switch (view)
    {
    case ChannelView::left:
        return l;
    case ChannelView::right:
        return r;
    case ChannelView::mid:
        for (std::size_t i = 0; i < len; ++i)
            l[i] = 0.5 * (l[i] + r[i]);
        return l;
    case ChannelView::side:
        for (std::size_t i = 0; i < len; ++i)
            l[i] = 0.5 * (l[i] - r[i]);
        return l;
    }
    return l;
}

double chainTailSeconds(const ChainSpec& chain, double fs)
{
    constexpr double kMaxTailSeconds = 60.0;
    const double ln60 = std::log(1.0e-3); // -60 dB
    // Samples for a decay of `radius` per `period` samples to reach -60 dB.
    auto decay = [&](double radius, double period)
    {
        if (!(radius > 0.0))
            return 0.0;
        if (radius >= 1.0)
            return kMaxTailSeconds * fs;
        return period * ln60 / std::log(radius);
    };
    double samples = 0.0;
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& spec = chain.stages[static_cast<std::size_t>(i)];
        if (!spec.enabled)
            continue;
        if (spec.type == StageType::comb)
        {
            const auto c = clampCombSettings(spec.comb, fs);
            const double period = combLineDelaySamples(c, fs);
            samples +=
                c.mode == CombMode::feedback ? decay(std::abs(c.gain), period) + period : period;
        }
        else if (spec.type == StageType::echoCancel)
        {
            double longest = 0.0, sum = 0.0;
            for (int k = 0; k < spec.echo.numReflections; ++k)
            {
                const auto& r = spec.echo.reflections[static_cast<std::size_t>(k)];
                longest = std::max(longest, r.delayMs * 1.0e-3 * fs);
                sum += std::abs(r.gain);
            }
            if (spec.echo.method == EchoMethod::series)
                samples += (spec.echo.terms + 1) * longest;
            else // |z| of every root of P is below sum^(1/longest) when sum < 1
                samples += decay(sum, longest) + longest;
        }
        else
        {
            const StageSections s = designStage(spec, fs);
            for (int j = 0; j < s.count; ++j)
            {
                const auto& c = s.sections[static_cast<std::size_t>(j)];
                // Slowest pole of 1 + a1 z^-1 + a2 z^-2.
                const double disc = c.a1 * c.a1 - 4.0 * c.a2;
                const double radius =
                    disc < 0.0 ? std::sqrt(c.a2) : 0.5 * (std::abs(c.a1) + std::sqrt(disc));
                samples += decay(radius, 1.0);
            }
        }
    }
    return std::min(samples / fs, kMaxTailSeconds);
}

std::vector<std::complex<double>> polynomialRoots(const std::vector<double>& c)
{
    std::size_t first = 0;
    while (first < c.size() && c[first] == 0.0)
        ++first;
    std::size_t last = c.size();
    std::vector<std::complex<double>> roots;
    // Trailing zeros are roots at the origin (numpy.roots does the same).
    while (last > first + 1 && c[last - 1] == 0.0)
    {
        --last;
        roots.emplace_back(0.0, 0.0);
    }
    if (last <= first + 1)
        return roots;
    const auto degree = static_cast<Eigen::Index>(last - first - 1);
    Eigen::MatrixXd companion = Eigen::MatrixXd::Zero(degree, degree);
    for (Eigen::Index k = 0; k < degree; ++k)
        companion(0, k) = -c[first + 1 + static_cast<std::size_t>(k)] / c[first];
    for (Eigen::Index k = 1; k < degree; ++k)
        companion(k, k - 1) = 1.0;
    Eigen::EigenSolver<Eigen::MatrixXd> solver(companion, false);
    const auto& ev = solver.eigenvalues();
    for (Eigen::Index k = 0; k < ev.size(); ++k)
        roots.push_back(ev(k));
    return roots;
}

PoleZero stagePolesZeros(const StageSpec& spec, double sampleRateHz)
{
    PoleZero pz;
    if (spec.type == StageType::comb)
    {
        pz.listed = false;
        pz.note = "comb: a long delay line; roots not listed (see its response)";
        return pz;
    }
    if (spec.type == StageType::echoCancel)
    {
        if (!spec.enabled)
            return pz;
        if (spec.echo.method != EchoMethod::exact || spec.nonCausal)
        {
            pz.listed = false;
            pz.note = spec.nonCausal ? "non-causal: runs backwards in time, no causal poles"
                                     : "series method: an FIR of high degree, roots not listed";
            return pz;
        }
        const auto p = echoModelPolynomial(spec.echo, sampleRateHz);
        const int degree = static_cast<int>(p.size()) - 1;
        if (degree > kMaxRootDegree)
        {
            pz.listed = false;
            pz.note = "degree " + std::to_string(degree) + " is above " +
                      std::to_string(kMaxRootDegree) + ": roots not listed";
            return pz;
        }
        pz.poles = polynomialRoots(p);
        pz.zeros.assign(static_cast<std::size_t>(degree), std::complex<double>(0.0, 0.0));
        pz.gain = 1.0 / p[0];
        return pz;
    }
    const StageSections s = designStage(spec, sampleRateHz);
    for (int j = 0; j < s.count; ++j)
    {
        const BiquadCoeffs& c = s.sections[static_cast<std::size_t>(j)];
        const bool firstOrder = c.b2 == 0.0 && c.a2 == 0.0;
        std::vector<double> b =
            firstOrder ? std::vector<double>{c.b0, c.b1} : std::vector<double>{c.b0, c.b1, c.b2};
        std::vector<double> a =
            firstOrder ? std::vector<double>{1.0, c.a1} : std::vector<double>{1.0, c.a1, c.a2};
        for (const auto& z : polynomialRoots(b))
            pz.zeros.push_back(z);
        for (const auto& p : polynomialRoots(a))
            pz.poles.push_back(p);
        // scipy.signal.tf2zpk: k = the first non-zero numerator coefficient over a0.
        const double lead = c.b0 != 0.0 ? c.b0 : (c.b1 != 0.0 ? c.b1 : c.b2);
        pz.gain *= lead;
    }
    return pz;
}

} // namespace kerf::dsp
