#include "EchoEstimator.h"

#include "FftwPlanner.h"

#include <Eigen/Dense>
#include <fftw3.h>

#if defined(__linux__)
#include <sys/mman.h>
#endif

#include <algorithm>
#include <array>
#include <climits>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <future>
#include <limits>
#include <map>
#include <memory>
#include <mutex>
#include <new>
#include <numbers>
#include <numeric>

namespace kerf::dsp
{

namespace
{

constexpr double kPi = std::numbers::pi;
/// Fraction of frames (cepstrum) and blocks (refinement) left out as the quietest
/// (ECHO-NOTES.md: quietest 30 % dropped; common practice for speech).
constexpr double kDropQuiet = 0.3;
/// Local SNR (power ratio) a band needs to take part in the first refinement (threshold
/// weighting): noise in the fitted signal biases the least-squares gain towards zero by about
/// (noise/signal) a/(1 - a^2), so only bands at least 20 dB above the noise floor are used
/// until the noise floor has been measured without the echo and can be compensated.
constexpr double kWeightSnr = 100.0;
/// Reflections up to this delay get the final noise-compensated refinement, ms.
constexpr double kFineMaxMs = 25.0;
/// The final refinement's robust reweighted passes (refineSparse): how many, the
/// Levenberg-Marquardt iterations in each, and the half-width of the local RMS envelope its
/// weights follow, ms.
constexpr int kSparsePasses = 2;
constexpr int kSparseIterations = 3;
constexpr double kSparseEnvelopeMs = 0.2;
/// Length of the excerpt's start that ranks a new candidate's start delays, s.
constexpr double kInitSeconds = 4.0;
/// Length of the synthetic noise stretch of the noise compensation, s (Fit::noise).
constexpr double kNoiseSeconds = 1.5;
/// Analysis frame of the refinement pre-filter, samples, and its FIR half-length.
constexpr int kWeightFrame = 2048;
constexpr int kWeightHalf = 511;
/// Refinement blocks for the activity mask, samples.
constexpr std::size_t kMaskBlock = 2048;
/// Largest distance, samples, between a cepstral peak and the delay refined from it (the peak's
/// parabolic interpolation is good to a fraction of a sample on a true echo).
constexpr double kMaxWander = 2.0;
/// Cepstral peaks below this (Bonferroni) confidence are not examined at all.
constexpr double kMinCepstralConfidence = 0.5;
/// Most frames averaged into one cepstrum, and most quiet frames for the noise floor.
constexpr double kMaxCepstrumFrames = 240.0;
constexpr double kMaxQuietFrames = 100.0;
/// A candidate joins the model provisionally when its frames agree at least this share of the
/// confidence threshold; the joint pass at the end applies the threshold itself (with the
/// other reflections still uncancelled, a weaker one's frames agree less).
constexpr double kProvisionalShare = 0.8;
/// Candidates that refinement may turn down before the search stops.
constexpr int kMaxRejections = 3;
/// Screening of a new candidate after one robust step (see estimateEchoes): it goes on to the
/// full refinement only if its frames agree at least this share of the confidence threshold
/// and its gain reaches this share of minGain.
constexpr double kScreenShare = 0.6;
constexpr double kScreenGain = 0.7;
/// Local SNR, dB, from which a frequency bin takes part in the ripple fit (noise flattens the
/// log ripple there).
constexpr double kBandSnrDb = 20.0;

// ---- FFTW plans: creation is not thread-safe, so it happens once per size under a mutex ----

struct FftPlans
{
    fftw_plan r2c = nullptr;
    fftw_plan c2r = nullptr;
};

/// The plan of size n from a per-type cache, made by make(n) under the planner lock the first
/// time.
template <typename Plan, typename Make> Plan cachedPlan(int n, Make make)
{
    std::lock_guard<std::mutex> lock(fftwPlannerMutex());
    static std::map<int, Plan> cache;
    auto it = cache.find(n);
    if (it == cache.end())
        it = cache.emplace(n, make(n)).first;
    return it->second;
}

FftPlans plansFor(int n)
{
    return cachedPlan<FftPlans>(n,
                                [](int size)
                                {
                                    double* in = fftw_alloc_real(static_cast<std::size_t>(size));
                                    fftw_complex* out =
                                        fftw_alloc_complex(static_cast<std::size_t>(size / 2 + 1));
                                    FftPlans p;
                                    p.r2c = fftw_plan_dft_r2c_1d(size, in, out, FFTW_ESTIMATE);
                                    p.c2r = fftw_plan_dft_c2r_1d(size, out, in, FFTW_ESTIMATE);
                                    fftw_free(in);
                                    fftw_free(out);
                                    return p;
                                });
}

/// Single-precision forward plan of size n (the frame statistics: ample for log spectra, and
/// about twice as fast as double).
fftwf_plan floatPlanFor(int n)
{
    return cachedPlan<fftwf_plan>(
        n,
        [](int size)
        {
            float* in = fftwf_alloc_real(static_cast<std::size_t>(size));
            fftwf_complex* out = fftwf_alloc_complex(static_cast<std::size_t>(size / 2 + 1));
            fftwf_plan p = fftwf_plan_dft_r2c_1d(size, in, out, FFTW_ESTIMATE);
            fftwf_free(in);
            fftwf_free(out);
            return p;
        });
}

/// An fftw_malloc'd array (same alignment as the planning arrays, for fftw_execute_dft_*).
template <typename T> struct FftwArray
{
    T* p = nullptr;
    explicit FftwArray(std::size_t n) { p = static_cast<T*>(fftw_malloc(sizeof(T) * n)); }
    ~FftwArray() { fftw_free(p); }
    FftwArray(const FftwArray&) = delete;
    FftwArray& operator=(const FftwArray&) = delete;
};

/// Periodic Hann window.
std::vector<double> hann(int n)
{
    std::vector<double> w(static_cast<std::size_t>(n));
    for (int i = 0; i < n; ++i)
        w[static_cast<std::size_t>(i)] = 0.5 - 0.5 * std::cos(2.0 * kPi * i / n);
    return w;
}

/// Value at fraction q (0..1) of a copy of v (nearest rank).
double quantile(std::vector<double> v, double q)
{
    if (v.empty())
        return 0.0;
    const std::size_t k =
        std::min(v.size() - 1, static_cast<std::size_t>(q * static_cast<double>(v.size())));
    std::nth_element(v.begin(), v.begin() + static_cast<long>(k), v.end());
    return v[k];
}

/// Energies of consecutive blocks of `block` samples (the last one partial).
std::vector<double> blockEnergies(const float* x, std::size_t n, std::size_t block)
{
    std::vector<double> e((n + block - 1) / block, 0.0);
    for (std::size_t b = 0; b < e.size(); ++b)
    {
        const std::size_t end = std::min(n, (b + 1) * block);
        double acc = 0.0;
#pragma omp simd reduction(+ : acc)
        for (std::size_t i = b * block; i < end; ++i)
            acc += static_cast<double>(x[i]) * x[i];
        e[b] = acc;
    }
    return e;
}

/// Natural logarithm of v[0..n) in place, for positive normal numbers (the power spectra
/// here, kept above a floor): exponent and mantissa split, ln m = 2 atanh((m - 1)/(m + 1)) by
/// its series to u^15 (m in [sqrt(1/2), sqrt(2)), |u| <= 0.172: error below 1e-13; common
/// practice). Written so that the compiler vectorises it, unlike calls to std::log.
void logInPlace(double* v, std::size_t n) noexcept
{
    constexpr double ln2 = 0.69314718055994530942;
    for (std::size_t i = 0; i < n; ++i)
    {
        std::uint64_t bits;
        std::memcpy(&bits, &v[i], sizeof bits);
        std::int64_t e = static_cast<std::int64_t>((bits >> 52) & 0x7ff) - 1023;
        bits = (bits & 0x000fffffffffffffull) | 0x3ff0000000000000ull; // m in [1, 2)
        double m;
        std::memcpy(&m, &bits, sizeof m);
        const bool high = m > 1.4142135623730951;
        m = high ? 0.5 * m : m;
        e += high ? 1 : 0;
        const double u = (m - 1.0) / (m + 1.0), u2 = u * u;
        const double poly =
            1.0 + u2 * (1.0 / 3 +
                        u2 * (1.0 / 5 +
                              u2 * (1.0 / 7 +
                                    u2 * (1.0 / 9 + u2 * (1.0 / 11 + u2 * (1.0 / 13 + u2 / 15))))));
        v[i] = static_cast<double>(e) * ln2 + 2.0 * u * poly;
    }
}

// ---- long signal buffers ----

/// Allocator for the estimator's signal buffers (a 10 s excerpt is 2 MB a buffer). On Linux a
/// block of 1 MiB or more is mapped on its own, 2 MiB-aligned, and marked for transparent huge
/// pages (madvise: taken where the system setting is "always" or "madvise", as here), so
/// that it faults in 2 MiB at a time instead of 4 KiB. Measured 2026-12-03 on the benchmark
/// machine (a virtual machine): a 4 KiB page fault costs 9.3 us, a huge page 0.2-0.7 us per
/// 4 KiB, and an estimate on 10 minutes of audio touched about 2600 fresh pages, 24 ms of the
/// 176 ms it took. Smaller blocks come from operator new as usual.
template <typename T> struct BigAllocator
{
    using value_type = T;
    static constexpr std::size_t kHuge = std::size_t{2} << 20;
    static constexpr std::size_t kMapFrom = std::size_t{1} << 20;

    BigAllocator() = default;
    template <typename U> BigAllocator(const BigAllocator<U>&) noexcept {}

    static std::size_t mappedLength(std::size_t bytes) noexcept
    {
        return (bytes + kHuge - 1) / kHuge * kHuge;
    }

    T* allocate(std::size_t n)
    {
        if (n > std::numeric_limits<std::size_t>::max() / sizeof(T))
            throw std::bad_array_new_length();
        const std::size_t bytes = n * sizeof(T);
#if defined(__linux__) && defined(MADV_HUGEPAGE)
        if (bytes >= kMapFrom)
        {
            const std::size_t len = mappedLength(bytes);
            void* raw = mmap(nullptr, len + kHuge, PROT_READ | PROT_WRITE,
                             MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
            if (raw == MAP_FAILED)
                throw std::bad_alloc();
            // Keep the 2 MiB-aligned stretch, give back the slack on either side.
            const auto start = reinterpret_cast<std::uintptr_t>(raw);
            const std::uintptr_t aligned = (start + kHuge - 1) / kHuge * kHuge;
            if (aligned > start)
                munmap(raw, aligned - start);
            const std::uintptr_t end = start + len + kHuge;
            if (end > aligned + len)
                munmap(reinterpret_cast<void*>(aligned + len), end - (aligned + len));
            madvise(reinterpret_cast<void*>(aligned), len, MADV_HUGEPAGE);
            return reinterpret_cast<T*>(aligned);
        }
#endif
        return static_cast<T*>(::operator new(bytes));
    }

    void deallocate(T* p, std::size_t n) noexcept
    {
#if defined(__linux__) && defined(MADV_HUGEPAGE)
        if (n * sizeof(T) >= kMapFrom)
        {
            munmap(p, mappedLength(n * sizeof(T)));
            return;
        }
#endif
        ::operator delete(p);
    }

    template <typename U> bool operator==(const BigAllocator<U>&) const noexcept
    {
        return true;
    }
};

/// A signal buffer of the estimator (see BigAllocator).
using Signal = std::vector<float, BigAllocator<float>>;

// ---- refinement: the exact inverse of the model and its sensitivities ----

struct Refl
{
    double delaySamples;
    double gain;
};

struct PathTaps
{
    int whole = 1;
    int taps = 2;
    double h[kMaxLagrangeOrder + 1] = {};
    double dh[kMaxLagrangeOrder + 1] = {};
};

PathTaps pathFor(double delaySamples, int order)
{
    // The same split and taps as EchoCanceller, so the fit is of what the stage will do.
    PathTaps p;
    const DelaySplit d = splitDelay(delaySamples, DelayInterpolation::lagrange, order, 1);
    p.whole = d.wholeSamples;
    p.taps = order + 1;
    lagrangeTaps(d.interpolatorSamples, order, p.h);
    lagrangeTapDerivatives(d.interpolatorSamples, order, p.dh);
    return p;
}

/// s[t] -= sum_i c[i] src[t - i] for t in [t0, t1): one path of the model filter over a block
/// whose sources all lie in the past. Taps as a constant, so that the compiler unrolls them and
/// vectorises over t; with fused multiply-adds in the AVX2/FMA variant.
template <int Taps, bool Fused>
inline __attribute__((always_inline)) void
firSubtractBody(float* __restrict s, const float* __restrict src, const float* c, std::size_t t0,
                std::size_t t1) noexcept
{
    float k[Taps];
    for (int i = 0; i < Taps; ++i)
        k[i] = c[i];
    for (std::size_t t = t0; t < t1; ++t)
    {
        float acc = s[t];
        for (int i = 0; i < Taps; ++i)
        {
            if constexpr (Fused)
                acc = std::fma(-k[i], src[t - static_cast<std::size_t>(i)], acc);
            else
                acc -= k[i] * src[t - static_cast<std::size_t>(i)];
        }
        s[t] = acc;
    }
}

#define KERF_FIR_VARIANTS(TAPS)                                                                    \
    void firSubtract##TAPS(float* __restrict s, const float* __restrict src, const float* c,       \
                           std::size_t t0, std::size_t t1) noexcept                                \
    {                                                                                              \
        firSubtractBody<TAPS, false>(s, src, c, t0, t1);                                           \
    }                                                                                              \
    __attribute__((target("avx2,fma"))) void firSubtract##TAPS##Fma(                               \
        float* __restrict s, const float* __restrict src, const float* c, std::size_t t0,          \
        std::size_t t1) noexcept                                                                   \
    {                                                                                              \
        firSubtractBody<TAPS, true>(s, src, c, t0, t1);                                            \
    }
KERF_FIR_VARIANTS(8)
KERF_FIR_VARIANTS(6)
KERF_FIR_VARIANTS(4)
#undef KERF_FIR_VARIANTS

void firSubtractAny(float* s, const float* src, const float* c, int taps, std::size_t t0,
                    std::size_t t1) noexcept
{
    static const bool fma = __builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma");
    switch (taps)
    {
    case 8:
        (fma ? firSubtract8Fma : firSubtract8)(s, src, c, t0, t1);
        return;
    case 6:
        (fma ? firSubtract6Fma : firSubtract6)(s, src, c, t0, t1);
        return;
    case 4:
        (fma ? firSubtract4Fma : firSubtract4)(s, src, c, t0, t1);
        return;
    default:
        for (std::size_t t = t0; t < t1; ++t)
        {
            float acc = s[t];
            for (int i = 0; i < taps; ++i)
                acc -= c[i] * src[t - static_cast<std::size_t>(i)];
            s[t] = acc;
        }
    }
}

/// The refinement problem: the (pre-whitened) excerpt, a mask of active blocks, and scratch.
struct Fit
{
    // Single precision for the signals: the recursion is stable, its rounding stays near
    // 1e-7 of the signal, far below what the fit resolves; sums are taken in double.
    Signal in; // padded with `pad` leading zeros
    std::size_t pad = 0;
    std::size_t n = 0;
    std::size_t initLength = SIZE_MAX; ///< samples the start grid of a new candidate uses
    double activeSamples = 0.0;        ///< of a noise stretch: the samples its energy counts
    std::vector<double> active;        // weight per kMaskBlock block (0: left out)
    Signal sampleWeight;               // weight per sample (index t - pad); empty: all 1
                                       // (run's energy and dot; set by refineSparse)
    int order = 5;
    Signal z;
    std::vector<Signal> sens;
    std::size_t numSens = 0;
    /// Noise compensation (bias-compensated least squares; e.g. T. Soderstrom, P. Stoica,
    /// "System Identification", 1989, on noise bias in least squares): the recording's noise,
    /// passed through the pre-filter and the inverse, adds its own energy to the fit's, and that
    /// energy falls as the gains shrink, pulling them towards zero. `noise` is a stretch of
    /// synthetic noise with the recording's (pre-filtered) noise spectrum; its energy and
    /// gradient through the same model, scaled to the active length (noiseScale), are
    /// subtracted. Null when no noise floor was measured.
    Fit* noise = nullptr;
    double noiseScale = 0.0;
    /// Half-gradient of the noise stretch's energy for the last run's sensitivities.
    std::vector<double> noiseGradient;

    /// z = H_inv(in) for the model; when sensitivities are wanted, also dz/da_k and dz/dD_k
    /// for the reflections listed in `which` (in that order). Returns the masked energy of z.
    /// z[t] depends on z only `whole` samples back or more (every path's plain delay), so the
    /// recursion runs in blocks of that many samples, each block a set of vector updates.
    double run(const std::vector<Refl>& model, const std::vector<int>& which, bool wantGain,
               bool wantDelay)
    {
        const std::size_t total = pad + n;
        std::vector<PathTaps> paths;
        std::size_t block = total;
        for (const auto& r : model)
        {
            paths.push_back(pathFor(r.delaySamples, order));
            block = std::min(block, static_cast<std::size_t>(std::max(1, paths.back().whole)));
        }
        const std::size_t ns = which.size() * ((wantGain ? 1 : 0) + (wantDelay ? 1 : 0));
        // Only the leading pad must read as zero: every later sample is written before use.
        z.resize(total);
        std::fill(z.begin(), z.begin() + static_cast<long>(pad), 0.0f);
        if (sens.size() < ns)
            sens.resize(ns); // a pool that never shrinks: no page-fault churn between runs
        for (std::size_t i = 0; i < ns; ++i)
        {
            sens[i].resize(total);
            std::fill(sens[i].begin(), sens[i].begin() + static_cast<long>(pad), 0.0f);
        }
        numSens = ns;
        const std::size_t K = paths.size();
        std::vector<std::array<float, kMaxLagrangeOrder + 1>> scaled(K);
        for (std::size_t k = 0; k < K; ++k)
            for (int i = 0; i < paths[k].taps; ++i)
                scaled[k][static_cast<std::size_t>(i)] =
                    static_cast<float>(model[k].gain * paths[k].h[i]);
        // s[t0..t1) -= sum_k a_k (L_k s)[t - M_k], the model filter on a signal's past.
        const auto applyModel = [&](float* s, std::size_t t0, std::size_t t1) noexcept
        {
            for (std::size_t k = 0; k < K; ++k)
                firSubtractAny(s, s - paths[k].whole, scaled[k].data(), paths[k].taps, t0, t1);
        };
        double energy = 0.0;
        float* zp = z.data();
        for (std::size_t t0 = pad; t0 < total; t0 += block)
        {
            const std::size_t t1 = std::min(total, t0 + block);
            std::copy(in.begin() + static_cast<long>(t0), in.begin() + static_cast<long>(t1),
                      zp + t0);
            applyModel(zp, t0, t1);
            std::size_t si = 0;
            for (int k : which)
            {
                const PathTaps& p = paths[static_cast<std::size_t>(k)];
                const float* zsrc = zp - p.whole;
                for (int pass = 0; pass < 2; ++pass)
                {
                    if ((pass == 0 && !wantGain) || (pass == 1 && !wantDelay))
                        continue;
                    // d/da_k: -(L_k z)[t - M_k]; d/dD_k: -a_k (L_k' z)[t - M_k]; both then
                    // through the model's recursion.
                    float* s = sens[si].data();
                    const double* taps = pass == 0 ? p.h : p.dh;
                    const double scale = pass == 0 ? 1.0 : model[static_cast<std::size_t>(k)].gain;
                    float c[kMaxLagrangeOrder + 1];
                    for (int i = 0; i < p.taps; ++i)
                        c[i] = static_cast<float>(scale * taps[i]);
                    std::fill(s + t0, s + t1, 0.0f);
                    firSubtractAny(s, zsrc, c, p.taps, t0, t1);
                    applyModel(s, t0, t1);
                    ++si;
                }
            }
            double part = 0.0;
            if (sampleWeight.empty())
            {
#pragma omp simd reduction(+ : part)
                for (std::size_t t = t0; t < t1; ++t)
                {
                    const double v = zp[t];
                    part += active[(t - pad) / kMaskBlock] * v * v;
                }
            }
            else
            {
                const float* sw = sampleWeight.data() - pad;
#pragma omp simd reduction(+ : part)
                for (std::size_t t = t0; t < t1; ++t)
                {
                    const double v = zp[t];
                    part += active[(t - pad) / kMaskBlock] * sw[t] * v * v;
                }
            }
            energy += part;
        }
        if (noise)
        {
            energy -= noiseScale * noise->run(model, which, wantGain, wantDelay);
            noiseGradient.assign(ns, 0.0);
            for (std::size_t i = 0; i < ns; ++i)
                noiseGradient[i] = noise->dot(noise->sens[i].data(), noise->z.data());
        }
        return energy;
    }

    /// Masked sum of a[t] b[t] over the active blocks (contiguous, so it vectorises).
    double dot(const float* a, const float* b) const
    {
        double acc = 0.0;
        for (std::size_t b0 = 0; b0 < n; b0 += kMaskBlock)
        {
            const double wt = active[b0 / kMaskBlock];
            if (wt == 0.0)
                continue;
            const std::size_t e = std::min(n, b0 + kMaskBlock);
            double part = 0.0;
            if (sampleWeight.empty())
            {
#pragma omp simd reduction(+ : part)
                for (std::size_t t = pad + b0; t < pad + e; ++t)
                    part += static_cast<double>(a[t]) * b[t];
            }
            else
            {
                const float* sw = sampleWeight.data() - pad;
#pragma omp simd reduction(+ : part)
                for (std::size_t t = pad + b0; t < pad + e; ++t)
                    part += static_cast<double>(sw[t]) * a[t] * b[t];
            }
            acc += wt * part;
        }
        return acc;
    }

    /// Normal equations of the masked least-squares problem in the sensitivities (with the
    /// noise's gradient taken off when compensating).
    void normalEquations(Eigen::MatrixXd& jtj, Eigen::VectorXd& jtz) const
    {
        const std::size_t m = numSens;
        jtj = Eigen::MatrixXd::Zero(static_cast<long>(m), static_cast<long>(m));
        jtz = Eigen::VectorXd::Zero(static_cast<long>(m));
        for (std::size_t i = 0; i < m; ++i)
        {
            jtz[static_cast<long>(i)] = dot(sens[i].data(), z.data());
            if (noise && i < noiseGradient.size())
                jtz[static_cast<long>(i)] -= noiseScale * noiseGradient[i];
            for (std::size_t j = i; j < m; ++j)
            {
                const double v = dot(sens[i].data(), sens[j].data());
                jtj(static_cast<long>(i), static_cast<long>(j)) = v;
                jtj(static_cast<long>(j), static_cast<long>(i)) = v;
            }
        }
    }
};

/// Levenberg-Marquardt on every gain and delay of the model (K. Levenberg 1944,
/// D. W. Marquardt 1963): minimises the masked energy of the cancelled output.
double refineAll(Fit& fit, std::vector<Refl>& model, double minD, double maxD, int iterations,
                 std::size_t firstFree = 0)
{
    std::vector<int> all;
    for (std::size_t k = firstFree; k < model.size(); ++k)
        all.push_back(static_cast<int>(k));
    double lambda = 1.0e-3;
    double energy = fit.run(model, all, true, true);
    for (int it = 0; it < iterations; ++it)
    {
        Eigen::MatrixXd jtj;
        Eigen::VectorXd jtz;
        fit.normalEquations(jtj, jtz);
        bool accepted = false;
        double largestStep = 0.0;
        while (lambda < 1.0e8)
        {
            Eigen::MatrixXd a = jtj;
            for (long i = 0; i < a.rows(); ++i)
                a(i, i) += lambda * std::max(jtj(i, i), 1e-300);
            const Eigen::VectorXd step = a.ldlt().solve(-jtz);
            std::vector<Refl> trial = model;
            largestStep = 0.0;
            for (std::size_t j = 0; j < all.size(); ++j)
            {
                const std::size_t k = static_cast<std::size_t>(all[j]);
                const double da = step[static_cast<long>(2 * j)];
                const double dd = std::clamp(step[static_cast<long>(2 * j + 1)], -1.0, 1.0);
                trial[k].gain = std::clamp(model[k].gain + da, -0.99, 0.99);
                trial[k].delaySamples = std::clamp(model[k].delaySamples + dd, minD, maxD);
                largestStep = std::max({largestStep, std::abs(da), std::abs(dd) * 0.01});
            }
            const double e = fit.run(trial, {}, false, false);
            if (e < energy)
            {
                model = trial;
                energy = e;
                lambda = std::max(lambda / 4.0, 1.0e-7);
                accepted = true;
                break;
            }
            lambda *= 4.0;
        }
        if (!accepted || largestStep < 1.0e-4)
            break;
        energy = fit.run(model, all, true, true);
    }
    return energy;
}

/// Robust per-frame refinement: with the other reflections held, each active frame of
/// kRobustBlock samples gives its own Gauss-Newton step for one reflection's gain and delay;
/// the median step over frames is taken. An echo is the same in every frame, while the
/// source's own correlation at the echo lag (a pitch period that happens to match, a formant
/// ringing) is there in some frames only: the median ignores those, where a least-squares fit
/// over the whole excerpt would be pulled by them (common practice: median of local
/// estimates as a robust location estimate).
std::vector<double> refineRobust(Fit& fit, std::vector<Refl>& model, double minD, double maxD,
                                 int iterations, std::size_t firstFree = 0)
{
    constexpr std::size_t kRobustBlock = 4096;
    std::vector<double> consistency(model.size(), 0.0);
    for (int it = 0; it < iterations; ++it)
        for (std::size_t k = firstFree; k < model.size(); ++k)
        {
            fit.run(model, {static_cast<int>(k)}, true, true);
            std::vector<double> da, dd;
            for (std::size_t b0 = 0; b0 + kRobustBlock <= fit.n; b0 += kRobustBlock)
            {
                double aa = 0, ad = 0, ddd = 0, az = 0, dz = 0, wsum = 0;
                for (std::size_t i = b0; i < b0 + kRobustBlock; ++i)
                {
                    const double w = fit.active[i / kMaskBlock];
                    if (w == 0.0)
                        continue;
                    const std::size_t t = fit.pad + i;
                    const double sa = fit.sens[0][t], sd = fit.sens[1][t], zt = fit.z[t];
                    aa += w * sa * sa;
                    ad += w * sa * sd;
                    ddd += w * sd * sd;
                    az += w * sa * zt;
                    dz += w * sd * zt;
                    wsum += w;
                }
                if (fit.noise && fit.noiseGradient.size() >= 2)
                {
                    // this block's share of the noise compensation (see Fit::noise)
                    const double share = wsum / fit.noise->activeSamples;
                    az -= share * fit.noiseGradient[0];
                    dz -= share * fit.noiseGradient[1];
                }
                const double det = aa * ddd - ad * ad;
                if (wsum == 0.0 || !(det > 1e-12 * aa * ddd))
                    continue;
                da.push_back(-(ddd * az - ad * dz) / det);
                dd.push_back(-(aa * dz - ad * az) / det);
            }
            if (da.size() < 5)
                return consistency;
            model[k].gain = std::clamp(model[k].gain + quantile(da, 0.5), -0.99, 0.99);
            {
                // Share of frames whose own estimate agrees with the median within half the
                // gain: an echo is in every frame, the source's own correlation is not.
                int agree = 0;
                const double m = quantile(da, 0.5);
                for (double v : da)
                    agree += std::abs(v - m) < 0.5 * std::abs(model[k].gain);
                consistency[k] = static_cast<double>(agree) / static_cast<double>(da.size());
            }
            model[k].delaySamples = std::clamp(
                model[k].delaySamples + std::clamp(quantile(dd, 0.5), -1.0, 1.0), minD, maxD);
        }
    return consistency;
}

/// Robust refinement by iteratively reweighted least squares (references from memory:
/// A. E. Beaton, J. W. Tukey, Technometrics 16(2), 1974; P. W. Holland, R. E. Welsch, "Robust
/// Regression Using Iteratively Reweighted Least-Squares", Communications in Statistics A6(9),
/// 1977): each pass weighs every sample by min(1, e0^2 / e[t]^2) and runs the least-squares
/// refinement with those weights held, where e is the local RMS of the cancelled output (over
/// 2 envelopeHalf + 1 samples) and e0 its RMS over the active blocks. Quiet stretches count in
/// full, loud ones as the logarithm of their energy (the loss whose reweighting this is: e^2
/// up to e0, e0^2 (1 + 2 ln(e / e0)) beyond; a Cauchy-type M-estimator). The whitened voice is
/// a train of sharp excitation pulses (glottal closures) with quiet stretches between them,
/// and its shape around each pulse correlates with itself a few milliseconds later; a
/// least-squares fit counts that correlation in full and reads part of it as echo (measured on
/// espeak-ng's male voice at 2 ms: gains off by up to 0.048). Reweighted, the fit follows the
/// stretches between the pulses and the pulses' own shape pulls it less (at 2 ms: 0.020);
/// loud voiced stretches whose pitch period matches the delay pull it less too (at 7.3 ms and
/// 70 dB SNR, -0.7 came out -0.55 with weights e0 / e, -0.64 with these). The weights follow
/// a local envelope rather than |e[t]| itself, so that the recording's noise hardly sets its
/// own weight: its energy in the weighted fit is then the mean weight times its energy in the
/// plain one, which is how the noise compensation is scaled.
void refineSparse(Fit& fit, std::vector<Refl>& model, double minD, double maxD,
                  std::size_t firstFree, int envelopeHalf)
{
    const double noiseScale = fit.noiseScale;
    const std::size_t n = fit.n;
    const std::size_t h = static_cast<std::size_t>(std::max(0, envelopeHalf));
    // Sum of v[i] (or v[i]^2) over the samples of the active blocks.
    const auto activeSum = [&fit, n](const float* v, bool squared)
    {
        double acc = 0.0;
        for (std::size_t b0 = 0; b0 < n; b0 += kMaskBlock)
        {
            if (fit.active[b0 / kMaskBlock] == 0.0)
                continue;
            const std::size_t e = std::min(n, b0 + kMaskBlock);
            double part = 0.0;
#pragma omp simd reduction(+ : part)
            for (std::size_t i = b0; i < e; ++i)
                part += squared ? static_cast<double>(v[i]) * v[i] : static_cast<double>(v[i]);
            acc += part;
        }
        return acc;
    };
    double activeCount = 0.0;
    for (std::size_t b0 = 0; b0 < n; b0 += kMaskBlock)
        if (fit.active[b0 / kMaskBlock] != 0.0)
            activeCount += static_cast<double>(std::min(n, b0 + kMaskBlock) - b0);
    for (int pass = 0; pass < kSparsePasses; ++pass)
    {
        fit.sampleWeight.clear();
        fit.run(model, {}, false, false);
        const float* z = fit.z.data() + fit.pad;
        const double activeEnergy = activeSum(z, true);
        if (activeEnergy <= 0.0)
            break;
        // Local energy over 2h + 1 samples (fewer at the ends) as a running sum, recomputed
        // from scratch every block so that rounding cannot build up.
        fit.sampleWeight.resize(n);
        float* w = fit.sampleWeight.data();
        const double floor2 = activeEnergy / activeCount;
        for (std::size_t b0 = 0; b0 < n; b0 += kMaskBlock)
        {
            const std::size_t e = std::min(n, b0 + kMaskBlock);
            double sum = 0.0;
            const std::size_t lo0 = b0 >= h ? b0 - h : 0;
            for (std::size_t j = lo0; j < std::min(n, b0 + h + 1); ++j)
                sum += static_cast<double>(z[j]) * z[j];
            for (std::size_t i = b0; i < e; ++i)
            {
                const std::size_t lo = i >= h ? i - h : 0, hi = std::min(n, i + h + 1);
                const double local = std::max(sum, 0.0) / static_cast<double>(hi - lo);
                w[i] = static_cast<float>(floor2 / std::max(local, floor2));
                if (i + h + 1 < n)
                    sum += static_cast<double>(z[i + h + 1]) * z[i + h + 1];
                if (i >= h)
                    sum -= static_cast<double>(z[i - h]) * z[i - h];
            }
        }
        fit.noiseScale = noiseScale * activeSum(w, false) / activeCount;
        refineAll(fit, model, minD, maxD, kSparseIterations, firstFree);
    }
    fit.sampleWeight.clear();
    fit.noiseScale = noiseScale;
}

/// Of reflections first..end, the one that fails the bars worst: a gain under minGain first,
/// then the lowest confidence under `bar`; model.size() when all pass.
std::size_t leastPassing(const std::vector<Refl>& model, const std::vector<double>& confidences,
                         std::size_t first, double bar, double minGain)
{
    std::size_t worst = model.size();
    double worstScore = INFINITY;
    for (std::size_t k = first; k < model.size(); ++k)
    {
        const double score = std::abs(model[k].gain) < minGain ? -1.0 : confidences[k];
        if (score < bar && score < worstScore)
        {
            worstScore = score;
            worst = k;
        }
    }
    return worst;
}

/// Start for a new reflection: a grid of delays around the cepstral peak, each with a few
/// Gauss-Newton steps on its gain alone; returns the best (delay, gain) by output energy.
Refl initialiseNew(Fit& fit, const std::vector<Refl>& model, Refl start, double minD, double maxD)
{
    // The grid only ranks delays and starts the gain: the first kInitSeconds of the excerpt do
    // (the full refinement and the screening use all of it).
    const std::size_t fullLength = fit.n;
    fit.n = std::min(fit.n, fit.initLength);
    struct Restore
    {
        Fit& f;
        std::size_t n;
        ~Restore() { f.n = n; }
    } restore{fit, fullLength};
    Refl best = start;
    double bestE = INFINITY;
    for (int g = -2; g <= 2; ++g)
    {
        std::vector<Refl> m = model;
        m.push_back({std::clamp(start.delaySamples + 0.4 * g, minD, maxD), start.gain});
        const int k = static_cast<int>(m.size()) - 1;
        double e = 0.0;
        for (int it = 0; it < 2; ++it)
        {
            e = fit.run(m, {k}, true, false);
            Eigen::MatrixXd jtj;
            Eigen::VectorXd jtz;
            fit.normalEquations(jtj, jtz);
            const double num = jtz[0], den = jtj(0, 0);
            if (den <= 0.0)
                break;
            const double before = m.back().gain;
            m.back().gain = std::clamp(before - num / den, -0.95, 0.95);
            // The last step's energy from the local quadratic model (Gauss-Newton's own
            // prediction) instead of one more run: it only ranks the grid's delays.
            const double da = m.back().gain - before;
            if (it == 1)
                e += 2.0 * num * da + den * da * da;
        }
        if (e < bestE)
        {
            bestE = e;
            best = m.back();
        }
    }
    return best;
}

/// out[i] = sum_m h[m] x[i + (L - 1)/2 - m] (a zero-phase FIR of odd length L, centred), by
/// overlap-save with 8192-point FFTs, computed in double and stored as Out. The caller's buffer
/// is written directly: a double temporary of a 10 s excerpt is 4 MB of fresh pages, whose
/// faults cost more than the convolution on a virtual machine.
template <typename T, typename Out>
void convolveCentred(const T* x, std::size_t n, const std::vector<double>& h, Out* out)
{
    constexpr int kConvFft = 8192;
    const std::size_t Nc = kConvFft, ncb = Nc / 2 + 1, Ls = h.size();
    const long half = static_cast<long>(Ls - 1) / 2;
    const std::size_t step = Nc - Ls + 1;
    const FftPlans conv = plansFor(kConvFft);
    FftwArray<double> a(Nc), b(Nc);
    FftwArray<fftw_complex> A(ncb), B(ncb);
    for (std::size_t i = 0; i < Nc; ++i)
        b.p[i] = i < Ls ? h[i] / kConvFft : 0.0;
    fftw_execute_dft_r2c(conv.r2c, b.p, B.p);
    for (std::size_t i0 = 0; i0 < n; i0 += step)
    {
        const long first = static_cast<long>(i0) + half - static_cast<long>(Ls) + 1;
        for (std::size_t i = 0; i < Nc; ++i)
        {
            const long j = first + static_cast<long>(i);
            a.p[i] = j >= 0 && j < static_cast<long>(n)
                         ? static_cast<double>(x[static_cast<std::size_t>(j)])
                         : 0.0;
        }
        fftw_execute_dft_r2c(conv.r2c, a.p, A.p);
        for (std::size_t k = 0; k < ncb; ++k)
        {
            const double re = A.p[k][0] * B.p[k][0] - A.p[k][1] * B.p[k][1];
            const double im = A.p[k][0] * B.p[k][1] + A.p[k][1] * B.p[k][0];
            A.p[k][0] = re;
            A.p[k][1] = im;
        }
        fftw_execute_dft_c2r(conv.c2r, A.p, a.p);
        for (std::size_t i = 0; i < step && i0 + i < n; ++i)
            out[i0 + i] = static_cast<Out>(a.p[Ls - 1 + i]);
    }
}

/// Refinement pre-filter: whitening weighted by the local signal-to-noise ratio,
/// |W|^2 = (1/P_y) SNR/(1 + SNR) with SNR = (P_y - P_n)/P_n (a Wiener weight on the whitened
/// spectrum; common practice), from cepstrally smoothed spectra of the active frames (P_y) and
/// of the quietest 10 % (P_n, the noise floor; common practice). An LTI filter commutes with
/// the echo model, so the echo parameters are unchanged; whitening keeps the source's own
/// correlation at the echo lag from biasing the fit, and the weight lets each band take part as
/// far as it is clear of the noise (a wider band than a hard SNR threshold: a sharper delay).
/// The noise the weight still lets through is compensated in the fit (see NoiseModel).
/// Writes the filtered signal to `filtered` (x.size() values, aligned with x: zero-phase FIR,
/// Hann-windowed, overlap-save) and returns the FIR that shapes unit white noise into the
/// filtered noise floor (empty when no noise floor could be measured).
struct Whitened
{
    std::vector<double> noiseShaper;
};

enum class Weighting
{
    threshold, ///< whitened where >= kWeightSnr over the noise floor, other bands removed
    wiener     ///< whitened with the Wiener weight SNR/(1 + SNR), noise compensated in the fit
};

Whitened weightedWhitening(const Signal& x, int lifterLags, Weighting weighting,
                           const std::vector<double>* noiseFloor, float* filtered)
{
    const int F = kWeightFrame;
    const std::size_t Fs = static_cast<std::size_t>(F), bins = Fs / 2 + 1, hop = Fs / 2;
    const std::size_t n = x.size();
    const std::vector<double> w = hann(F);
    std::vector<std::size_t> starts;
    for (std::size_t s0 = 0; s0 + Fs <= n; s0 += hop)
        starts.push_back(s0);
    if (starts.empty())
        starts.push_back(0);
    std::vector<double> energy(starts.size(), 0.0);
    for (std::size_t f = 0; f < starts.size(); ++f)
        for (std::size_t i = starts[f]; i < std::min(n, starts[f] + Fs); ++i)
            energy[f] += static_cast<double>(x[i]) * x[i];
    const double activeThr = quantile(energy, kDropQuiet);
    const double quietThr = quantile(energy, 0.1);
    const FftPlans plans = plansFor(F);
    FftwArray<double> frame(Fs);
    FftwArray<fftw_complex> spec(bins);
    std::vector<double> py(bins, 0.0), pn(bins, 0.0);
    int na = 0, nq = 0;
    for (std::size_t f = 0; f < starts.size(); ++f)
    {
        const bool active = energy[f] > activeThr, quiet = energy[f] <= quietThr;
        if (!active && !quiet)
            continue;
        for (std::size_t i = 0; i < Fs; ++i)
            frame.p[i] = starts[f] + i < n ? w[i] * x[starts[f] + i] : 0.0;
        fftw_execute_dft_r2c(plans.r2c, frame.p, spec.p);
        auto& acc = active ? py : pn;
        for (std::size_t k = 0; k < bins; ++k)
            acc[k] += spec.p[k][0] * spec.p[k][0] + spec.p[k][1] * spec.p[k][1];
        (active ? na : nq)++;
    }
    if (noiseFloor && noiseFloor->size() == bins)
    {
        pn = *noiseFloor; // measured elsewhere (noiseFloorAfterCancelling), same units
        nq = 1;
    }
    // Smooth both spectra by low-quefrency liftering (cepstral smoothing; Childers et al.
    // 1977): keep quefrencies below lifterLags, well under the shortest echo searched, so that
    // the whitening follows the source's envelope but not the echo's comb ripple (whitening
    // the ripple would cancel part of the echo before the fit sees it).
    for (auto* p : {&py, &pn})
    {
        const int cnt = p == &py ? na : nq;
        for (std::size_t k = 0; k < bins; ++k)
        {
            spec.p[k][0] = std::log((*p)[k] / std::max(1, cnt) + 1e-300);
            spec.p[k][1] = 0.0;
        }
        fftw_execute_dft_c2r(plans.c2r, spec.p, frame.p);
        for (int q = 0; q < F; ++q)
        {
            const int aq = std::min(q, F - q);
            const double lift = aq < lifterLags ? 0.5 + 0.5 * std::cos(kPi * aq / lifterLags) : 0.0;
            frame.p[q] *= lift / F;
        }
        fftw_execute_dft_r2c(plans.r2c, frame.p, spec.p);
        for (std::size_t k = 0; k < bins; ++k)
            (*p)[k] = std::exp(spec.p[k][0]);
    }
    double peak = 0.0;
    for (std::size_t k = 0; k < bins; ++k)
        peak = std::max(peak, py[k]);
    std::vector<double> gainK(bins, 0.0), noiseK(bins, 0.0);
    const bool haveNoise = nq > 0;
    double windowEnergy = 0.0; // sum w^2: E|X_k|^2 = sigma^2 sum w^2 for white noise
    for (double v : w)
        windowEnergy += v * v;
    int passed = 0;
    for (std::size_t k = 1; k + 1 < bins && weighting == Weighting::threshold; ++k)
        if (py[k] > kWeightSnr * pn[k] && py[k] > 1e-12 * peak)
        {
            gainK[k] = 1.0 / std::sqrt(py[k]);
            ++passed;
        }
    for (std::size_t k = 1; k + 1 < bins && weighting == Weighting::threshold && passed < 8; ++k)
        gainK[k] = 1.0 / std::sqrt(py[k] + 1e-12 * peak + 1e-300); // no band clear: plain
    for (std::size_t k = 1; k + 1 < bins && weighting == Weighting::wiener; ++k)
    {
        const double y = py[k] + 1e-12 * peak + 1e-300;
        if (!haveNoise)
        {
            gainK[k] = 1.0 / std::sqrt(y); // no noise floor to measure: plain whitening
            continue;
        }
        const double snr = std::max(py[k] - pn[k], 0.0) / std::max(pn[k], 1e-300);
        const double g2 = snr / (1.0 + snr) / y;
        gainK[k] = std::sqrt(g2);
        noiseK[k] = std::sqrt(g2 * pn[k] / windowEnergy); // |W|^2 S_n, per-sample units
    }
    // Zero-phase FIRs by frequency sampling, Hann-windowed to 2 kWeightHalf + 1 taps.
    const int L = 2 * kWeightHalf + 1;
    const auto design = [&](const std::vector<double>& mag)
    {
        for (std::size_t k = 0; k < bins; ++k)
        {
            spec.p[k][0] = mag[k];
            spec.p[k][1] = 0.0;
        }
        fftw_execute_dft_c2r(plans.c2r, spec.p, frame.p);
        std::vector<double> fir(static_cast<std::size_t>(L));
        for (int m = -kWeightHalf; m <= kWeightHalf; ++m)
        {
            const double win = 0.5 + 0.5 * std::cos(kPi * m / (kWeightHalf + 1));
            fir[static_cast<std::size_t>(m + kWeightHalf)] = win * frame.p[(m + F) % F] / F;
        }
        return fir;
    };
    const std::vector<double> h = design(gainK);
    Whitened result;
    if (haveNoise && weighting == Weighting::wiener)
        result.noiseShaper = design(noiseK);
    convolveCentred(x.data(), n, h, filtered);
    return result;
}

/// The echo stage's settings for a model (exact inverse, Lagrange of `order`).
EchoCancelSettings settingsFor(const std::vector<Refl>& model, double sampleRateHz, int order)
{
    EchoCancelSettings s;
    for (const auto& m : model)
        s.reflections[static_cast<std::size_t>(s.numReflections++)] = {
            m.delaySamples * 1e3 / sampleRateHz, m.gain};
    s.interpolationOrder = order;
    return s;
}

/// True when the model's exact inverse is stable (the stage's Schur-Cohn test).
bool modelIsStable(const std::vector<Refl>& model, double sampleRateHz, int order)
{
    return checkEchoStability(settingsFor(model, sampleRateHz, order), sampleRateHz).stable;
}

/// What cancelledExcerpt reuses between calls: one prepared stage (preparing one allocates and
/// clears its delay lines, 1.7 MB) and the output buffer.
struct Canceller
{
    EchoCanceller stage;
    Signal out;
    double sampleRateHz = 0.0;
};

/// The excerpt with `model` cancelled by the stage itself (exact inverse, Lagrange of `order`),
/// in c.out.
const Signal& cancelledExcerpt(const Signal& excerpt, const std::vector<Refl>& model,
                               double sampleRateHz, int order, Canceller& c)
{
    if (c.sampleRateHz != sampleRateHz)
    {
        c.stage.prepare(sampleRateHz, 4096, 1);
        c.sampleRateHz = sampleRateHz;
    }
    c.stage.setSettings(settingsFor(model, sampleRateHz, order));
    c.stage.reset();
    c.out.assign(excerpt.begin(), excerpt.end());
    for (std::size_t off = 0; off < c.out.size(); off += 4096)
    {
        float* ch[1] = {c.out.data() + off};
        c.stage.process(ch, 1, static_cast<int>(std::min<std::size_t>(4096, c.out.size() - off)));
    }
    return c.out;
}

/// The noise floor as weightedWhitening measures it (mean |X_k|^2 of the quietest 10 % of
/// Hann frames of kWeightFrame), but measured after cancelling `model`: in an echoic
/// recording the pauses are filled by echo tails (measured: the quietest frames read 8-180x
/// the true noise floor below 4 kHz with a 40-80 ms echo of gain 0.5-0.8), which would make the
/// noise compensation take speech for noise. The cancelled noise is the recording's noise
/// through 1/A, so each bin is divided by 1/|A|^2 averaged over the bin (A evaluated on a grid
/// fine enough to resolve its ripple). Empty when the model is unstable or too few frames.
std::vector<double> noiseFloorAfterCancelling(const Signal& excerpt, const std::vector<Refl>& model,
                                              double sampleRateHz, int order, Canceller& canceller)
{
    if (model.empty() || !modelIsStable(model, sampleRateHz, order))
        return {};
    const Signal& z = cancelledExcerpt(excerpt, model, sampleRateHz, order, canceller);
    const int F = kWeightFrame;
    const std::size_t Fs = static_cast<std::size_t>(F), bins = Fs / 2 + 1, hop = Fs / 2;
    if (z.size() < 8 * Fs)
        return {};
    std::vector<std::size_t> starts;
    for (std::size_t s0 = 0; s0 + Fs <= z.size(); s0 += hop)
        starts.push_back(s0);
    std::vector<double> energy(starts.size());
    for (std::size_t f = 0; f < starts.size(); ++f)
    {
        double e = 0.0;
        for (std::size_t i = starts[f]; i < starts[f] + Fs; ++i)
            e += static_cast<double>(z[i]) * z[i];
        energy[f] = e;
    }
    const double quietThr = quantile(energy, 0.1);
    const std::vector<double> w = hann(F);
    const FftPlans plans = plansFor(F);
    FftwArray<double> frame(Fs);
    FftwArray<fftw_complex> spec(bins);
    // Per bin, the median over the quiet frames divided by ln 2 (the median of the exponential
    // distribution a noise bin's power follows; common practice): a few quiet frames that still
    // hold speech do not move it, where they would move the mean.
    std::vector<std::vector<double>> powers(bins);
    int nq = 0;
    for (std::size_t f = 0; f < starts.size(); ++f)
    {
        if (energy[f] > quietThr)
            continue;
        for (std::size_t i = 0; i < Fs; ++i)
            frame.p[i] = w[i] * z[starts[f] + i];
        fftw_execute_dft_r2c(plans.r2c, frame.p, spec.p);
        for (std::size_t k = 0; k < bins; ++k)
            powers[k].push_back(spec.p[k][0] * spec.p[k][0] + spec.p[k][1] * spec.p[k][1]);
        ++nq;
    }
    if (nq < 4)
        return {};
    std::vector<double> pn(bins, 0.0);
    for (std::size_t k = 0; k < bins; ++k)
        pn[k] = quantile(powers[k], 0.5) / std::numbers::ln2;
    // A(e^{jw}) = 1 + sum a_k e^{-jw M_k} L_k(e^{jw}) on a grid of at least 8 points per
    // ripple period of the longest path, then 1/|A|^2 averaged over each analysis bin.
    std::size_t span = 1;
    for (const auto& m : model)
    {
        const PathTaps p = pathFor(m.delaySamples, order);
        span = std::max(span, static_cast<std::size_t>(p.whole + p.taps));
    }
    std::size_t Nf = Fs;
    while (Nf < 8 * span)
        Nf *= 2;
    const FftPlans fine = plansFor(static_cast<int>(Nf));
    FftwArray<double> poly(Nf);
    FftwArray<fftw_complex> resp(Nf / 2 + 1);
    std::fill(poly.p, poly.p + Nf, 0.0);
    poly.p[0] = 1.0;
    for (const auto& m : model)
    {
        const PathTaps p = pathFor(m.delaySamples, order);
        for (int i = 0; i < p.taps; ++i)
            poly.p[static_cast<std::size_t>(p.whole + i)] += m.gain * p.h[i];
    }
    fftw_execute_dft_r2c(fine.r2c, poly.p, resp.p);
    const std::size_t ratio = Nf / Fs;
    std::vector<double> inv(bins, 1.0);
    for (std::size_t k = 0; k < bins; ++k)
    {
        double acc = 0.0;
        int cnt = 0;
        for (long j = static_cast<long>(k * ratio) - static_cast<long>(ratio / 2);
             j <= static_cast<long>(k * ratio + ratio / 2); ++j)
        {
            const long jj = std::clamp(j < 0 ? -j : j, 0L, static_cast<long>(Nf / 2));
            const double re = resp.p[jj][0], im = resp.p[jj][1];
            acc += 1.0 / std::max(re * re + im * im, 1e-12);
            ++cnt;
        }
        inv[k] = acc / cnt;
    }
    // The frames see 1/|A|^2 through their window's resolution, so a bin-by-bin division is
    // wrong where the ripple is finer than that; over +-16 bins both sides average the ripple,
    // and the noise floor is smooth at that scale (it is liftered further in the whitening).
    constexpr long kBox = 16;
    std::vector<double> corrected(bins, 0.0);
    for (std::size_t k = 0; k < bins; ++k)
    {
        double num = 0.0, den = 0.0;
        for (long j = static_cast<long>(k) - kBox; j <= static_cast<long>(k) + kBox; ++j)
        {
            const std::size_t jj = static_cast<std::size_t>(
                std::clamp(j < 0 ? -j : j, 0L, static_cast<long>(bins) - 1));
            num += pn[jj];
            den += inv[jj];
        }
        corrected[k] = num / den;
    }
    pn = corrected;
    return pn;
}

/// Sets up the refinement problem on the excerpt: pre-filtered (weightedWhitening with the
/// given weighting and noise floor), its active blocks, and for Wiener weighting the noise
/// stretch of the noise compensation (noiseFit, linked from fit). fit.order, fit.pad set.
void prepareFit(Fit& fit, Fit& noiseFit, const Signal& excerpt, int lifterCut, Weighting weighting,
                const std::vector<double>* noiseFloor, double sampleRateHz,
                std::size_t warmupSamples = 0)
{
    const std::size_t len = excerpt.size();
    fit.n = len;
    fit.noise = nullptr;
    {
        fit.in.assign(fit.pad + len, 0.0f);
        const Whitened whitened =
            weightedWhitening(excerpt, lifterCut, weighting, noiseFloor, fit.in.data() + fit.pad);
        const std::size_t blocks = (len + kMaskBlock - 1) / kMaskBlock;
        const std::vector<double> be = blockEnergies(excerpt.data(), len, kMaskBlock);
        const double thr = quantile(be, kDropQuiet);
        fit.active.assign(blocks + 1, 0.0);
        double activeSamples = 0.0;
        for (std::size_t b = 0; b < blocks; ++b)
        {
            fit.active[b] = be[b] > thr ? 1.0 : 0.0;
            activeSamples +=
                fit.active[b] *
                static_cast<double>(std::min(len, (b + 1) * kMaskBlock) - b * kMaskBlock);
        }
        if (!whitened.noiseShaper.empty() && activeSamples > 0.0)
        {
            // The noise stretch: unit white Gaussian noise (a fixed seed, so the fit's
            // objective is a smooth function of the model) through the noise shaper.
            // A warm-up of warmupSamples (whole mask blocks, left out of the energy) first: the
            // inverse's recursion starts from silence and needs several of its delays to reach
            // the steady state the recording's noise is in.
            const std::size_t warm = (warmupSamples + kMaskBlock - 1) / kMaskBlock * kMaskBlock;
            const std::size_t counted =
                std::min(len, static_cast<std::size_t>(kNoiseSeconds * sampleRateHz));
            const std::size_t ns = warm + counted;
            const std::vector<double>& q = whitened.noiseShaper;
            std::vector<double> white(ns);
            std::uint64_t state = 0x5EED0F0ECB0ull;
            const auto uniform = [&state]
            {
                // SplitMix64 (S. Vigna), top 53 bits
                std::uint64_t v = (state += 0x9E3779B97F4A7C15ull);
                v = (v ^ (v >> 30)) * 0xBF58476D1CE4E5B9ull;
                v = (v ^ (v >> 27)) * 0x94D049BB133111EBull;
                v ^= v >> 31;
                return (static_cast<double>(v >> 11) + 0.5) * (1.0 / 9007199254740992.0);
            };
            for (std::size_t i = 0; i + 1 < white.size(); i += 2)
            {
                // Box-Muller (G. E. P. Box, M. E. Muller, 1958)
                const double r = std::sqrt(-2.0 * std::log(uniform())), ph = 2.0 * kPi * uniform();
                white[i] = r * std::cos(ph);
                white[i + 1] = r * std::sin(ph);
            }
            noiseFit.order = fit.order;
            noiseFit.n = ns;
            noiseFit.pad = fit.pad;
            noiseFit.in.assign(noiseFit.pad + ns, 0.0f);
            convolveCentred(white.data(), ns, q, noiseFit.in.data() + noiseFit.pad);
            noiseFit.active.assign(ns / kMaskBlock + 2, 1.0);
            std::fill(noiseFit.active.begin(),
                      noiseFit.active.begin() + static_cast<long>(warm / kMaskBlock), 0.0);
            noiseFit.activeSamples = static_cast<double>(counted);
            fit.noise = &noiseFit;
            fit.noiseScale = activeSamples / static_cast<double>(counted);
        }
    }
}

/// Hann-window overlap rho(D) = sum w[n] w[n + D] / sum w^2: the share of an echo at lag D
/// that stays inside one frame (the frame-truncation bias of the cepstral peak).
double windowOverlap(const std::vector<double>& w, double delaySamples)
{
    const int d0 = static_cast<int>(std::floor(delaySamples));
    const double f = delaySamples - d0;
    auto at = [&](int d)
    {
        double s = 0.0;
        for (std::size_t i = 0; i + static_cast<std::size_t>(d) < w.size(); ++i)
            s += w[i] * w[i + static_cast<std::size_t>(d)];
        return s;
    };
    const double e = at(0);
    return ((1.0 - f) * at(d0) + f * at(d0 + 1)) / e;
}

/// Candidate from a cepstrum: the lag between qmin and qmax where |c| stands highest above
/// the local level of the cepstrum (RMS over a window around the lag, the peak's own lobe
/// left out), its signed value and that ratio (a z-score).
struct Candidate
{
    int lag = 0;
    double delaySamples = 0.0;
    double value = 0.0; // signed c at the peak
    double z = 0.0;     // |c| / local RMS
    int lagsSearched = 0;
};

Candidate findPeak(const std::vector<double>& c, int qmin, int qmax,
                   const std::vector<Refl>& exclude, int halfWidth)
{
    Candidate best;
    const int size = static_cast<int>(c.size());
    qmax = std::min(qmax, size - 2);
    qmin = std::max(qmin, 1);
    if (qmax <= qmin)
        return best;
    double bestAbs = 0.0;
    best.lagsSearched = qmax - qmin + 1;
    for (int q = qmin; q <= qmax; ++q)
    {
        bool skip = false;
        for (const auto& r : exclude)
            if (std::abs(q - r.delaySamples) <= 2.0 * halfWidth + 1.0)
                skip = true;
        if (skip)
            continue;
        // The largest |c| is the candidate (after the low-quefrency lifter the cepstrum's
        // spread is roughly even); its z-score against the local level gives the confidence.
        const double v = std::abs(c[static_cast<std::size_t>(q)]);
        if (v > bestAbs)
        {
            bestAbs = v;
            best.lag = q;
        }
    }
    if (best.lag == 0)
        return best;
    // z-score against the spread of the whole searched range: 1.4826 x median |c| (robust
    // sigma of Gaussian noise; common practice).
    std::vector<double> mags;
    for (int q = qmin; q <= qmax; ++q)
        mags.push_back(std::abs(c[static_cast<std::size_t>(q)]));
    const double sigma = 1.4826 * quantile(mags, 0.5);
    best.z = sigma > 0.0 ? bestAbs / sigma : 0.0;
    const auto at = [&](int q) { return c[static_cast<std::size_t>(std::clamp(q, 0, size - 1))]; };
    const double sgn = at(best.lag) >= 0.0 ? 1.0 : -1.0;
    // Parabolic interpolation of the peak (common practice).
    const double ym = sgn * at(best.lag - 1), y0 = sgn * at(best.lag), yp = sgn * at(best.lag + 1);
    const double den = ym - 2.0 * y0 + yp;
    const double off = den < 0.0 ? std::clamp(0.5 * (ym - yp) / den, -0.5, 0.5) : 0.0;
    best.delaySamples = best.lag + off;
    best.value = at(best.lag);
    return best;
}

/// Confidence from the peak's z-score: one minus the Bonferroni bound on the chance that
/// Gaussian noise of the same sigma puts a peak this high anywhere among the searched lags.
double confidenceFromZ(double z, int lags)
{
    const double pFalse = static_cast<double>(lags) * std::erfc(z / std::sqrt(2.0));
    return std::clamp(1.0 - pFalse, 0.0, 1.0);
}

// ---- the frame-averaged log spectrum and the fit of the echo's ripple in it ----

/// Frame statistics of a recording at frame size F (Hann, hop F/2): the mean log power
/// spectrum of the active frames (the quietest kDropQuiet left out), and the mean power of
/// the active and of the quietest 10 % of frames (the noise floor).
struct SpectralStats
{
    int F = 0;
    std::vector<double> meanLog, activePower, quietPower;
    int used = 0, quiet = 0;
};

SpectralStats spectralStats(const float* mono, std::size_t n, int F, double dropQuietFraction)
{
    SpectralStats st;
    st.F = F;
    const std::size_t Fs = static_cast<std::size_t>(F), hop = Fs / 2, bins = Fs / 2 + 1;
    const fftwf_plan plan = floatPlanFor(F);
    std::vector<float> w(Fs);
    {
        const std::vector<double> wd = hann(F);
        std::copy(wd.begin(), wd.end(), w.begin());
    }
    std::vector<std::size_t> starts;
    if (n <= Fs)
        starts.push_back(0);
    else
        for (std::size_t s0 = 0; s0 + Fs <= n; s0 += hop)
            starts.push_back(s0);
    // Frame energies from the energies of hop-long blocks (a frame is two blocks).
    std::vector<double> blockEnergy = blockEnergies(mono, n, hop);
    blockEnergy.resize(blockEnergy.size() + 2, 0.0);
    std::vector<double> energy(starts.size());
    for (std::size_t f = 0; f < starts.size(); ++f)
        energy[f] = blockEnergy[starts[f] / hop] + blockEnergy[starts[f] / hop + 1];
    double threshold = starts.size() > 3 ? quantile(energy, dropQuietFraction) : -1.0;
    // The noise floor: the quietest 10 % of frames, at most kMaxQuietFrames of them.
    const double quietThreshold =
        starts.size() > 3
            ? quantile(energy, std::min(0.1, kMaxQuietFrames / static_cast<double>(starts.size())))
            : -1.0;
    // Long recordings: at most kMaxCepstrumFrames active frames, the loudest (the average
    // hardly changes beyond a few hundred frames; the cost stays bounded).
    if (starts.size() > 3 &&
        static_cast<double>(starts.size()) * (1.0 - dropQuietFraction) > kMaxCepstrumFrames)
        threshold =
            std::max(threshold, quantile(energy, 1.0 - kMaxCepstrumFrames /
                                                           static_cast<double>(starts.size())));
    float* frame = fftwf_alloc_real(Fs);
    fftwf_complex* spec = fftwf_alloc_complex(bins);
    st.meanLog.assign(bins, 0.0);
    std::vector<double> logs(bins);
    st.activePower.assign(bins, 0.0);
    st.quietPower.assign(bins, 0.0);
    for (std::size_t f = 0; f < starts.size(); ++f)
    {
        const bool active = energy[f] > threshold && energy[f] > 0.0;
        const bool quiet = energy[f] <= quietThreshold;
        if (!active && !quiet)
            continue;
        const std::size_t s0 = starts[f];
        for (std::size_t i = 0; i < Fs; ++i)
            frame[i] = s0 + i < n ? w[i] * mono[s0 + i] : 0.0f;
        fftwf_execute_dft_r2c(plan, frame, spec);
        if (active)
        {
            const double eps = 1.0e-12 * energy[f] + 1.0e-30;
            for (std::size_t k = 0; k < bins; ++k)
            {
                const double re = spec[k][0], im = spec[k][1];
                const double p = re * re + im * im;
                st.activePower[k] += p;
                logs[k] = p + eps;
            }
            logInPlace(logs.data(), bins);
            for (std::size_t k = 0; k < bins; ++k)
                st.meanLog[k] += logs[k];
            ++st.used;
        }
        else
        {
            for (std::size_t k = 0; k < bins; ++k)
            {
                const double re = spec[k][0], im = spec[k][1];
                st.quietPower[k] += re * re + im * im;
            }
            ++st.quiet;
        }
    }
    fftwf_free(frame);
    fftwf_free(spec);
    for (std::size_t k = 0; k < bins; ++k)
    {
        st.meanLog[k] /= std::max(1, st.used);
        st.activePower[k] /= std::max(1, st.used);
        st.quietPower[k] /= std::max(1, st.quiet);
    }
    return st;
}

/// Quefrency-domain operations on a half spectrum v[0..F/2] of an even real sequence.
struct Quefrency
{
    int F;
    FftPlans plans;
    FftwArray<double> t;
    FftwArray<fftw_complex> c;
    explicit Quefrency(int size)
        : F(size), plans(plansFor(size)), t(static_cast<std::size_t>(size)),
          c(static_cast<std::size_t>(size / 2 + 1))
    {
    }

    /// Cepstrum of v: IFFT of the half spectrum, c[q] for q = 0..F/2.
    std::vector<double> cepstrum(const std::vector<double>& v)
    {
        for (std::size_t k = 0; k < v.size(); ++k)
        {
            c.p[k][0] = v[k];
            c.p[k][1] = 0.0;
        }
        fftw_execute_dft_c2r(plans.c2r, c.p, t.p);
        std::vector<double> out(v.size());
        for (std::size_t q = 0; q < v.size(); ++q)
            out[q] = t.p[q] / F;
        return out;
    }

    /// v with quefrencies below `cut` removed (Hann taper): keep = false gives the high-pass
    /// part, keep = true the smooth (low-quefrency) part.
    void lifter(std::vector<double>& v, int cut, bool keepLow)
    {
        for (std::size_t k = 0; k < v.size(); ++k)
        {
            c.p[k][0] = v[k];
            c.p[k][1] = 0.0;
        }
        fftw_execute_dft_c2r(plans.c2r, c.p, t.p);
        for (int q = 0; q < F; ++q)
        {
            const int aq = std::min(q, F - q);
            const double low = aq < cut ? 0.5 + 0.5 * std::cos(kPi * aq / cut) : 0.0;
            t.p[q] *= (keepLow ? low : 1.0 - low) / F;
        }
        fftw_execute_dft_r2c(plans.r2c, t.p, c.p);
        for (std::size_t k = 0; k < v.size(); ++k)
            v[k] = c.p[k][0];
    }
};

} // namespace

int echoEstimatorFrameSize(double maxDelayMs, double sampleRateHz)
{
    // At least 4x the longest delay, so that it mostly stays inside one frame; even and with
    // no prime factor above 5, where FFTs are about as fast as at powers of two.
    const int least =
        std::clamp(static_cast<int>(std::ceil(4.0e-3 * maxDelayMs * sampleRateHz)), 2048, 1 << 17);
    for (int v = least + (least & 1);; v += 2)
    {
        int r = v;
        for (int p : {2, 3, 5})
            while (r % p == 0)
                r /= p;
        if (r == 1)
            return v;
    }
}

std::vector<double> averagedPowerCepstrum(const float* mono, std::size_t n, int frameSize,
                                          double dropQuietFraction, int* framesUsed)
{
    // Real cepstrum of the mean log power spectrum: c[q] = (1/F) sum_k mean(ln|X_k|^2)
    // e^{j 2 pi k q / F} (Bogert et al. 1963), = the mean of the frames' cepstra.
    const SpectralStats st = spectralStats(mono, n, frameSize, dropQuietFraction);
    if (framesUsed)
        *framesUsed = st.used;
    Quefrency qf(frameSize);
    return qf.cepstrum(st.meanLog);
}

EchoEstimate estimateEchoes(const float* mono, std::size_t n, double sampleRateHz,
                            const EchoEstimatorOptions& opt)
{
    EchoEstimate out;
    out.sampleRateHz = sampleRateHz;
    const int order = std::clamp(opt.interpolationOrder, 1, kMaxLagrangeOrder);
    const double minMs = std::max(opt.minDelayMs, kMinEchoDelayMs);
    const double maxMs = std::clamp(opt.maxDelayMs, minMs, kMaxEchoDelayMs);
    const double minD = std::max(minMs * 1e-3 * sampleRateHz, 2.0);
    const double maxD = maxMs * 1e-3 * sampleRateHz;
    const int maxRefl = std::clamp(opt.maxReflections, 0, kMaxEchoReflections);
    if (n < 1024 || maxRefl == 0)
    {
        out.message = "recording too short";
        return out;
    }
    // Frames long enough that the longest echo mostly stays inside one frame.
    const int F = echoEstimatorFrameSize(maxMs, sampleRateHz);
    const std::vector<double> window = hann(F);
    const int qmin = static_cast<int>(std::floor(minD));
    const int qmax = static_cast<int>(std::ceil(maxD));

    // The whole recording's frame statistics, on a second thread while the excerpt and its
    // refinement problem are prepared (they only read the recording).
    std::future<SpectralStats> statsJob =
        std::async(std::launch::async, [=] { return spectralStats(mono, n, F, kDropQuiet); });
    // Refinement excerpt: the loudest stretch of at most refineSeconds.
    const std::size_t len =
        std::min(n, static_cast<std::size_t>(std::max(1.0, opt.refineSeconds) * sampleRateHz));
    std::size_t start = 0;
    if (len < n)
    {
        // energies of quarter-second blocks, then the loudest run of whole blocks
        const std::size_t step =
            std::max<std::size_t>(1, static_cast<std::size_t>(0.25 * sampleRateHz));
        std::vector<double> be = blockEnergies(mono, n, step);
        be.push_back(0.0);
        const std::size_t span = len / step;
        double run = 0.0, best = -1.0;
        for (std::size_t b = 0; b < be.size(); ++b)
        {
            run += be[b];
            if (b >= span)
                run -= be[b - span];
            if (b + 1 >= span && run > best && (b + 1 - span) * step + len <= n)
            {
                best = run;
                start = (b + 1 - span) * step;
            }
        }
    }
    const Signal excerpt(mono + start, mono + start + len);
    Canceller canceller;

    // Low-quefrency lifter: below the shortest delay searched, so spectral envelopes follow
    // the source but not an echo's ripple.
    const int lifterCut = std::clamp(static_cast<int>(0.8 * minD), 4, F / 8);

    // Refinement problem: the excerpt, pre-filtered (weightedWhitening), and its active blocks.
    Fit fit;
    fit.order = order;
    fit.n = len;
    fit.pad = static_cast<std::size_t>(std::ceil(maxD)) + static_cast<std::size_t>(order) + 4;
    Fit noiseFit;
    prepareFit(fit, noiseFit, excerpt, lifterCut, Weighting::threshold, nullptr, sampleRateHz);
    fit.initLength = static_cast<std::size_t>(kInitSeconds * sampleRateHz);

    // Frame-averaged log spectrum of the whole recording, and the band clear of the noise
    // (smoothed active-frame spectrum at least kBandSnrDb over the quietest frames').
    const SpectralStats st = statsJob.get();
    Quefrency qf(F);
    std::vector<double> band;
    double bandShare = 0.0;
    {
        const std::size_t bins = st.meanLog.size();
        std::vector<double> la(bins), lq(bins);
        double peak = 0.0;
        for (std::size_t k = 0; k < bins; ++k)
            peak = std::max(peak, st.activePower[k]);
        for (std::size_t k = 0; k < bins; ++k)
        {
            la[k] = std::log(st.activePower[k] + 1e-300);
            lq[k] = std::log(st.quietPower[k] + 1e-300);
        }
        qf.lifter(la, lifterCut, true);
        qf.lifter(lq, lifterCut, true);
        band.assign(bins, 0.0);
        double total = 0.0;
        const double toDb = 10.0 / std::log(10.0);
        for (std::size_t k = 1; k + 1 < bins; ++k)
        {
            const double snrDb = toDb * (la[k] - lq[k]);
            const double levelDb = toDb * (la[k] - std::log(peak + 1e-300));
            // soft edge over 6 dB; never more than 70 dB under the peak
            band[k] = std::clamp((snrDb - kBandSnrDb) / 6.0, 0.0, 1.0) *
                      std::clamp((levelDb + 70.0) / 6.0, 0.0, 1.0);
            total += band[k];
        }
        if (st.quiet == 0 || total < 16.0)
        {
            total = 0.0; // no noise floor to measure: the top 50 dB of the spectrum
            for (std::size_t k = 1; k + 1 < bins; ++k)
            {
                band[k] =
                    std::clamp((toDb * (la[k] - std::log(peak + 1e-300)) + 50.0) / 6.0, 0.0, 1.0);
                total += band[k];
            }
        }
        bandShare = total / static_cast<double>(bins);
    }
    // Width of a cepstral peak when only a share of the band carries the ripple.
    const int bandHalfWidth =
        std::clamp(static_cast<int>(std::ceil(1.0 / std::max(bandShare, 1e-3))), 2, 32);

    std::vector<Refl> model, rejected, lastModel;
    std::vector<double> lastCancelled;
    std::vector<double> confidences;
    int rejections = 0;
    for (int r = 0; r < maxRefl; ++r)
    {
        std::vector<double> logSpec;
        if (model.empty())
            logSpec = st.meanLog;
        else if (!lastCancelled.empty() && lastModel.size() == model.size() &&
                 std::equal(model.begin(), model.end(), lastModel.begin(),
                            [](const Refl& a, const Refl& b)
                            { return a.delaySamples == b.delaySamples && a.gain == b.gain; }))
            logSpec = lastCancelled; // the model did not change since (a candidate was set aside)
        else
        {
            // Cancel what is known, then look again (the strongest's rahmonics are gone).
            const Signal& cancelled =
                cancelledExcerpt(excerpt, model, sampleRateHz, order, canceller);
            logSpec = spectralStats(cancelled.data(), len, F, kDropQuiet).meanLog;
            lastCancelled = logSpec;
            lastModel = model;
        }
        qf.lifter(logSpec, lifterCut, false);
        // After a cancellation the noise carries the inverse's own ripple; only the band clear
        // of the noise shows the recording's.
        if (!model.empty())
            for (std::size_t k = 0; k < logSpec.size(); ++k)
                logSpec[k] *= band[k];
        const std::vector<double> cep = qf.cepstrum(logSpec);
        std::vector<Refl> excluded = model;
        excluded.insert(excluded.end(), rejected.begin(), rejected.end());
        const int hw = model.empty() ? 3 : bandHalfWidth;
        const Candidate cand = findPeak(cep, qmin, qmax, excluded, hw);
        const double conf = confidenceFromZ(cand.z, cand.lagsSearched);
        if (cand.lag == 0 || conf < kMinCepstralConfidence)
        {
            out.strongestRejectedConfidence = std::max(out.strongestRejectedConfidence, conf);
            break;
        }
        if (cand.lag <= qmin || cand.lag >= qmax)
        {
            // Highest at an end of the searched range: the slope of something outside it
            // (the source's low-quefrency envelope, mostly), not a peak inside.
            rejected.push_back({cand.delaySamples, 0.0});
            if (++rejections >= kMaxRejections)
                break;
            --r;
            continue;
        }
        // Start: the cepstral peak, gain corrected for frame truncation (windowOverlap).
        const double rho = std::max(0.05, windowOverlap(window, cand.delaySamples));
        const std::vector<Refl> before = model;
        model.push_back(initialiseNew(
            fit, model, {cand.delaySamples, std::clamp(cand.value / rho, -0.95, 0.95)}, minD,
            maxD));
        if (std::abs(model.back().gain) < 0.5 * opt.minGain)
        {
            // Clearly too weak already at the start: set aside without the full refinement.
            rejected.push_back(model.back());
            model = before;
            if (++rejections >= kMaxRejections)
                break;
            --r;
            continue;
        }
        // Screening: one robust step on the new reflection alone. Candidates whose frames
        // already disagree clearly, or whose gain stays far under minGain, are set aside
        // before the full refinement (what the search mostly costs). Measured on the test
        // scenes: true echoes 0.39-0.94 here, candidates later rejected 0.03-0.41.
        const double early = refineRobust(fit, model, minD, maxD, 1, model.size() - 1).back();
        if (early < kScreenShare * opt.confidenceThreshold ||
            std::abs(model.back().gain) < kScreenGain * opt.minGain)
        {
            out.strongestRejectedConfidence = std::max(out.strongestRejectedConfidence, early);
            rejected.push_back(model.back());
            rejected.push_back({cand.delaySamples, 0.0});
            model = before;
            if (++rejections >= kMaxRejections)
                break;
            --r;
            continue;
        }
        refineAll(fit, model, minD, maxD, 8, model.size() - 1);
        const double consistency = refineRobust(fit, model, minD, maxD, 3).back();
        // A refined delay held at an end of the searched range is not a peak inside it, and one
        // that wandered away from the cepstral peak did not come from that peak's echo.
        const bool atEdge =
            model.back().delaySamples <= minD + 0.01 || model.back().delaySamples >= maxD - 0.01;
        const bool wandered = std::abs(model.back().delaySamples - cand.delaySamples) > kMaxWander;
        if (std::abs(model.back().gain) < opt.minGain ||
            consistency < kProvisionalShare * opt.confidenceThreshold || atEdge || wandered)
        {
            // Not an echo after all (or not a usable one): keep it out of the next search
            // and try the next candidate, a few times at most.
            out.strongestRejectedConfidence =
                std::max(out.strongestRejectedConfidence, consistency);
            rejected.push_back(model.back());
            // The refinement may have moved away from the peak: keep the peak itself out too,
            // or the next search finds it again.
            rejected.push_back({cand.delaySamples, 0.0});
            model = before;
            if (++rejections >= kMaxRejections)
                break;
            --r;
            continue;
        }
        confidences.push_back(consistency);
    }
    // Joint pass: every reflection refined with all the others in the model, then the least
    // consistent one below the threshold dropped, until all pass (a weaker reflection's own
    // frames agree only once the others are cancelled too).
    while (!model.empty())
    {
        refineAll(fit, model, minD, maxD, 8, 0);
        confidences = refineRobust(fit, model, minD, maxD, 3);
        // An unusable (unstable) model loses its least consistent reflection.
        const double bar =
            modelIsStable(model, sampleRateHz, order) ? opt.confidenceThreshold : INFINITY;
        const std::size_t worst = leastPassing(model, confidences, 0, bar, opt.minGain);
        if (worst == model.size())
            break;
        out.strongestRejectedConfidence =
            std::max(out.strongestRejectedConfidence, confidences[worst]);
        model.erase(model.begin() + static_cast<long>(worst));
        confidences.erase(confidences.begin() + static_cast<long>(worst));
    }
    // Final refinement of the short reflections (up to kFineMaxMs) with the noise floor
    // measured without the echo: Wiener-weighted whitening and the noise's own energy taken off
    // the fit (see Fit::noise). A short echo's ripple has few periods inside the band that
    // stands 20 dB clear of the noise, so the threshold fit pins its delay and gain loosely
    // (measured at 2 ms: delays off by up to 1.7 samples); the wider band sharpens both. Longer
    // reflections keep the threshold fit's values (they meet the bars with it, and on the
    // speech-like source the wider band lets its pitch structure pull large gains down).
    std::size_t longCount = 0;
    {
        // long ones first (held), short ones last (refined), confidences alongside
        std::vector<std::pair<Refl, double>> both;
        for (std::size_t k = 0; k < model.size(); ++k)
            both.emplace_back(model[k], confidences[k]);
        const auto isLong = [&](const std::pair<Refl, double>& r)
        { return r.first.delaySamples > kFineMaxMs * 1e-3 * sampleRateHz; };
        std::stable_partition(both.begin(), both.end(), isLong);
        longCount = static_cast<std::size_t>(std::count_if(both.begin(), both.end(), isLong));
        for (std::size_t k = 0; k < both.size(); ++k)
        {
            model[k] = both[k].first;
            confidences[k] = both[k].second;
        }
    }
    // The reported reflections all pass the threshold and minGain (EchoEstimator.h), in the
    // fine fit as in the joint pass: one that passed there but not here (measured: a voice's
    // own structure near 1.7 ms, confidence 0.40, and its echo, gain -0.06, beside a 10.7 ms
    // reflection) is dropped, and the rest refined again without it.
    Fit fine;
    Fit fineNoise;
    bool fineHasBuffers = false;
    while (!model.empty() && longCount < model.size())
    {
        const std::vector<double> floor =
            noiseFloorAfterCancelling(excerpt, model, sampleRateHz, order, canceller);
        if (floor.empty())
            break;
        if (!fineHasBuffers)
        {
            fine.order = order;
            fine.pad = fit.pad;
            // The search's fit is done with: its signal buffers are reused (their pages are
            // already mapped; fresh ones cost a page fault each, measured 10-20 ms a call).
            fine.in = std::move(fit.in);
            fine.z = std::move(fit.z);
            fine.sens = std::move(fit.sens);
            fineHasBuffers = true;
        }
        // Warm-up: 12 times the longest path (a gain of 0.8 leaves 0.8^24 of the start).
        std::size_t longest = 0;
        for (const auto& m : model)
            longest = std::max(longest, static_cast<std::size_t>(std::ceil(m.delaySamples)));
        prepareFit(fine, fineNoise, excerpt, lifterCut, Weighting::wiener, &floor, sampleRateHz,
                   12 * (longest + static_cast<std::size_t>(order) + 1));
        std::vector<Refl> refined = model;
        refineAll(fine, refined, minD, maxD, 8, longCount);
        const std::vector<double> c = refineRobust(fine, refined, minD, maxD, 2, longCount);
        // The confidences stay those of the frames' agreement above.
        refineSparse(fine, refined, minD, maxD, longCount,
                     static_cast<int>(std::lround(kSparseEnvelopeMs * 1e-3 * sampleRateHz)));
        if (c.size() != refined.size() || !modelIsStable(refined, sampleRateHz, order))
            break; // the joint pass's values stand
        const std::size_t worst =
            leastPassing(refined, c, longCount, opt.confidenceThreshold, opt.minGain);
        if (worst == refined.size())
        {
            model = refined;
            for (std::size_t k = longCount; k < model.size(); ++k)
                confidences[k] = c[k];
            break;
        }
        out.strongestRejectedConfidence = std::max(out.strongestRejectedConfidence, c[worst]);
        model.erase(model.begin() + static_cast<long>(worst));
        confidences.erase(confidences.begin() + static_cast<long>(worst));
    }
    for (std::size_t k = 0; k < model.size(); ++k)
    {
        EchoReflectionEstimate e;
        e.delaySamples = model[k].delaySamples;
        e.delayMs = model[k].delaySamples * 1e3 / sampleRateHz;
        e.gain = model[k].gain;
        e.confidence = confidences[k];
        out.reflections.push_back(e);
    }
    std::stable_sort(out.reflections.begin(), out.reflections.end(),
                     [](const auto& a, const auto& b)
                     { return std::abs(a.gain) > std::abs(b.gain); });
    return out;
}

EchoCancelSettings echoSettingsFromEstimate(const EchoEstimate& estimate, EchoMethod method,
                                            int terms)
{
    EchoCancelSettings s;
    s.method = method;
    s.terms = terms;
    for (const auto& r : estimate.reflections)
    {
        if (s.numReflections >= kMaxEchoReflections)
            break;
        s.reflections[static_cast<std::size_t>(s.numReflections++)] = {r.delayMs, r.gain};
    }
    return s;
}

} // namespace kerf::dsp
