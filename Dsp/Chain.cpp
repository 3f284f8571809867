#include "Chain.h"

#include "Design/Band.h"
#include "Design/Peaking.h"
#include "Design/Shelf.h"
#include "Design/Tilt.h"

#include <algorithm>
#include <atomic>

#if defined(__SSE2__)
#include <immintrin.h>
#define KERF_HAS_SSE 1
#endif

namespace kerf::dsp
{

std::string_view stageTypeName(StageType type) noexcept
{
    switch (type)
    {
    case StageType::peaking:
        return "peaking";
    case StageType::lowShelf:
        return "low_shelf";
    case StageType::highShelf:
        return "high_shelf";
    case StageType::highPass:
        return "high_pass";
    case StageType::lowPass:
        return "low_pass";
    case StageType::notch:
        return "notch";
    case StageType::bandPass:
        return "band_pass";
    case StageType::allPass:
        return "all_pass";
    case StageType::tilt:
        return "tilt";
    case StageType::echoCancel:
        return "echo_cancel";
    case StageType::comb:
        return "comb";
    }
    return "unknown";
}

std::string_view channelModeName(ChannelMode mode) noexcept
{
    switch (mode)
    {
    case ChannelMode::both:
        return "both";
    case ChannelMode::left:
        return "left";
    case ChannelMode::right:
        return "right";
    case ChannelMode::mid:
        return "mid";
    case ChannelMode::side:
        return "side";
    }
    return "both";
}

std::string_view designModeName(DesignMode mode) noexcept
{
    return mode == DesignMode::bilinear ? "bilinear" : "accurate";
}

std::string_view alignmentName(PassAlignment alignment) noexcept
{
    return alignment == PassAlignment::linkwitzRiley ? "linkwitz_riley" : "butterworth";
}

bool ChainSpec::push(const StageSpec& s) noexcept
{
    if (numStages >= kMaxStages)
        return false;
    stages[static_cast<std::size_t>(numStages++)] = s;
    return true;
}

StageSections designStage(const StageSpec& s, double fs) noexcept
{
    StageSections out;
    if (!s.enabled)
        return out;
    switch (s.type)
    {
    case StageType::peaking:
        out.push(designPeaking(s.freqHz, s.gainDb, s.q, fs, s.design));
        break;
    case StageType::lowShelf:
        out.push(designLowShelf(s.freqHz, s.gainDb, s.slope, fs, s.design));
        break;
    case StageType::highShelf:
        out.push(designHighShelf(s.freqHz, s.gainDb, s.slope, fs, s.design));
        break;
    case StageType::highPass:
        out = designHighPass(s.freqHz, s.order, s.alignment, s.q, fs, s.design);
        break;
    case StageType::lowPass:
        out = designLowPass(s.freqHz, s.order, s.alignment, s.q, fs, s.design);
        break;
    case StageType::notch:
        out.push(designNotch(s.freqHz, s.q, fs, s.design));
        break;
    case StageType::bandPass:
        out.push(designBandPass(s.freqHz, s.q, fs, s.design));
        break;
    case StageType::allPass:
        out.push(designAllPass(s.freqHz, s.order, s.q, fs, s.design));
        break;
    case StageType::tilt:
        out.push(designTilt(s.freqHz, s.gainDb, fs, s.design));
        break;
    case StageType::echoCancel:
    case StageType::comb:
        break; // not sections: see EchoCanceller and CombStage
    }
    return out;
}

void ChainProcessor::prepare(double sampleRateHz, int maxBlockSize, int numChannels)
{
    sampleRate = sampleRateHz;
    channelCount = std::clamp(numChannels, 1, kMaxChannels);
    blockSize = std::max(maxBlockSize, 64);
    scratch.assign(static_cast<std::size_t>(blockSize) * kMaxChannels, 0.0);
    for (auto& e : echoPool)
        e.prepare(sampleRateHz, blockSize, channelCount);
    for (auto& c : combPool)
        c.prepare(sampleRateHz, blockSize, channelCount);
    // Designs depend on the rate: force a redesign on the next setChain().
    for (auto& st : stages)
        st = Stage{};
    numStages = 0;
    reset();
}

void ChainProcessor::reset() noexcept
{
    for (auto& s : pairState)
        s = PairState{};
    for (auto& channel : extraState)
        for (auto& s : channel)
            s.reset();
    for (auto& e : echoPool)
        e.reset();
    for (auto& c : combPool)
        c.reset();
}

int ChainProcessor::activeSections() const noexcept
{
    int n = 0;
    for (int i = 0; i < numStages; ++i)
        if (stages[static_cast<std::size_t>(i)].active)
            n += stages[static_cast<std::size_t>(i)].count;
    return n;
}

void ChainProcessor::setChain(const ChainSpec& chain) noexcept
{
    const int n = std::min(chain.numStages, kMaxStages);
    int echoes = 0, combs = 0;
    anyActive = false;
    for (int i = 0; i < n; ++i)
    {
        auto& st = stages[static_cast<std::size_t>(i)];
        const StageSpec& spec = chain.stages[static_cast<std::size_t>(i)];
        const bool wasActive = st.active && i < numStages;
        if (spec.type == StageType::comb)
        {
            const bool live = spec.enabled && combs < kMaxCombStages && !scratch.empty();
            const int slot = live ? combs++ : -1;
            if (live)
            {
                auto& comb = combPool[static_cast<std::size_t>(slot)];
                if (!(wasActive && !st.sections && st.comb == slot))
                    comb.reset();
                if (!(wasActive && spec == st.spec && st.comb == slot))
                    comb.setSettings(spec.comb);
            }
            st.spec = spec;
            st.sections = false;
            st.count = 0;
            st.echo = -1;
            st.comb = slot;
            st.active = live;
            anyActive = anyActive || live;
            continue;
        }
        if (!isSectionType(spec.type))
        {
            // An echo canceller from the pool, in order of appearance; a non-causal one
            // cannot run live and is left to the offline renderer.
            const bool live =
                spec.enabled && !spec.nonCausal && echoes < kMaxEchoStages && !scratch.empty();
            const int slot = live ? echoes++ : -1;
            if (live)
            {
                auto& canceller = echoPool[static_cast<std::size_t>(slot)];
                if (!(wasActive && !st.sections && st.echo == slot))
                    canceller.reset();
                if (!(wasActive && spec == st.spec && st.echo == slot))
                    canceller.setSettings(spec.echo);
            }
            st.spec = spec;
            st.sections = false;
            st.count = 0;
            st.comb = -1;
            st.echo = slot;
            st.active = live;
            anyActive = anyActive || live;
            continue;
        }
        if (wasActive && st.sections && spec == st.spec)
        {
            anyActive = true;
            continue;
        }
        if (!st.sections)
            st = Stage{}; // was an echo stage: its sections start from rest
        const StageSections designed = designStage(spec, sampleRate);
        const int base = i * kMaxSectionsPerStage;
        for (int j = 0; j < designed.count; ++j)
        {
            const auto idx = static_cast<std::size_t>(base + j);
            const SvfCoeffs c = toSvf(designed.sections[static_cast<std::size_t>(j)]);
            coeffs[idx] = c;
            // y = mHigh (v0 - k v1 - v2) + mBand v1 + mLow v2, folded.
            const double folded[6] = {
                c.a1, c.a2, c.g, c.mHigh, c.mBand - c.mHigh * c.k, c.mLow - c.mHigh};
            PairCoeffs& pc = pairCoeffs[idx];
            double* lanes[6] = {pc.a1, pc.a2, pc.g, pc.c0, pc.c1, pc.c2};
            for (int m = 0; m < 6; ++m)
                lanes[m][0] = lanes[m][1] = folded[m];
            // A section that was not running (stage off, or fewer sections before) starts
            // from rest; running ones keep their memories.
            if (!wasActive || j >= st.count)
            {
                pairState[idx] = PairState{};
                for (auto& channel : extraState)
                    channel[idx].reset();
            }
        }
        st.spec = spec;
        st.sections = true;
        st.echo = -1;
        st.count = designed.count;
        st.active = designed.count > 0;
        anyActive = anyActive || st.active;
    }
    for (int i = n; i < numStages; ++i)
        stages[static_cast<std::size_t>(i)].active = false;
    numStages = n;
}

void ChainProcessor::runSections(int channel, int firstSection, int count, double* x,
                                 int len) noexcept
{
    for (int j = firstSection; j < firstSection + count; ++j)
    {
        const auto idx = static_cast<std::size_t>(j);
        const SvfCoeffs k = coeffs[idx];
        SvfState s;
        if (channel < 2)
            s = {pairState[idx].ic1[channel], pairState[idx].ic2[channel]};
        else
            s = extraState[static_cast<std::size_t>(channel - 2)][idx];
        for (int n = 0; n < len; ++n)
            x[n] = processSvf(k, s, x[n]);
        if (channel < 2)
        {
            pairState[idx].ic1[channel] = s.ic1eq;
            pairState[idx].ic2[channel] = s.ic2eq;
        }
        else
            extraState[static_cast<std::size_t>(channel - 2)][idx] = s;
    }
}

namespace
{
/// The stereo kernel's view of one section: coefficient lanes and state lanes.
struct StretchSection
{
    const double* coeffs; // a1, a2, g, c0, c1, c2 pairs
    double* state;        // ic1, ic2 pairs
};

/// One section step of the stereo kernel (Simper 2013, output mix folded):
/// v1 = a1 ic1 + a2 (v0 - ic2), v2 = ic2 + g v1, ic1 <- 2 v1 - ic1, ic2 <- 2 v2 - ic2,
/// y = c0 v0 + c1 v1 + c2 v2. `Fma` selects fused multiply-adds.
#if defined(__SSE2__)
#define KERF_SECTION_STEP(MUL_ADD)                                                                 \
    {                                                                                              \
        const __m128d ic1 = _mm_load_pd(st), ic2 = _mm_load_pd(st + 2);                            \
        const __m128d v3 = _mm_sub_pd(v, ic2);                                                     \
        const __m128d v1 = MUL_ADD(_mm_load_pd(c + 2), v3, _mm_mul_pd(_mm_load_pd(c), ic1));       \
        const __m128d v2 = MUL_ADD(_mm_load_pd(c + 4), v1, ic2);                                   \
        _mm_store_pd(st, _mm_sub_pd(_mm_add_pd(v1, v1), ic1));                                     \
        _mm_store_pd(st + 2, _mm_sub_pd(_mm_add_pd(v2, v2), ic2));                                 \
        v = MUL_ADD(_mm_load_pd(c + 10), v2,                                                       \
                    MUL_ADD(_mm_load_pd(c + 8), v1, _mm_mul_pd(_mm_load_pd(c + 6), v)));           \
    }

inline __m128d mulAdd(__m128d a, __m128d b, __m128d c) noexcept
{
    return _mm_add_pd(_mm_mul_pd(a, b), c);
}

/// Runs a stretch of sections over both channels (one SSE2 register holds left and right)
/// in a skewed order: at step t, section j works on sample t - j. The sections of one step
/// are independent, so the processor overlaps them instead of waiting on each section's
/// recursion in turn; the fill and drain at the block's ends keep the result exact, with
/// no added latency. `carry[j]` holds the sample waiting to enter section j.
#define KERF_STRETCH_BODY(MUL_ADD)                                                                 \
    const int last = count - 1;                                                                    \
    for (int t = 0; t < len + last; ++t)                                                           \
    {                                                                                              \
        const int jHigh = t < last ? t : last;                                                     \
        const int jLow = t - len + 1 > 0 ? t - len + 1 : 0;                                        \
        for (int j = jHigh; j >= jLow; --j)                                                        \
        {                                                                                          \
            const int n = t - j;                                                                   \
            __m128d v = j == 0 ? _mm_set_pd(r[n], l[n]) : carry[j];                                \
            const double* c = sections[j].coeffs;                                                  \
            double* st = sections[j].state;                                                        \
            KERF_SECTION_STEP(MUL_ADD)                                                             \
            if (j == last)                                                                         \
            {                                                                                      \
                l[n] = _mm_cvtsd_f64(v);                                                           \
                r[n] = _mm_cvtsd_f64(_mm_unpackhi_pd(v, v));                                       \
            }                                                                                      \
            else                                                                                   \
                carry[j + 1] = v;                                                                  \
        }                                                                                          \
    }

void stretchKernel(const StretchSection* sections, int count, double* l, double* r, int len,
                   __m128d* carry) noexcept
{
    KERF_STRETCH_BODY(mulAdd)
}

#if defined(__x86_64__) && defined(__GNUC__)
/// The same kernel with fused multiply-adds, for processors that have them (chosen once at
/// run time). FMA rounds once where the plain kernel rounds twice, so results differ in the
/// last bits between machines, never within one.
__attribute__((target("fma"))) void
stretchKernelFma(const StretchSection* sections, int count, double* l, double* r, int len,
                 __m128d* carry) noexcept {KERF_STRETCH_BODY(_mm_fmadd_pd)}
#endif
#undef KERF_STRETCH_BODY
#undef KERF_SECTION_STEP
#else
#error "Kerf's processing kernels need SSE2 (x86-64); add a portable kernel for other CPUs."
#endif

std::atomic<bool> fmaAllowed{true};

bool hasFma() noexcept
{
#if defined(__x86_64__) && defined(__GNUC__)
    static const bool fma = __builtin_cpu_supports("fma");
    return fma && fmaAllowed.load(std::memory_order_relaxed);
#else
    return false;
#endif
}
} // namespace

void ChainProcessor::allowFusedMultiplyAdd(bool allowed) noexcept
{
    fmaAllowed.store(allowed);
}

void ChainProcessor::runStereoStretch(int first, int end, double* l, double* r, int len) noexcept
{
    // Sample by sample through every section of the stretch: consecutive sections are
    // independent at any instant, so their arithmetic overlaps in the CPU's pipeline
    // instead of waiting on one section's recursion; both channels share one vector.
    std::array<StretchSection, kMaxSections> list;
    int count = 0;
    for (int s = first; s < end; ++s)
    {
        const int base = s * kMaxSectionsPerStage;
        for (int j = base; j < base + stages[static_cast<std::size_t>(s)].count; ++j)
            list[static_cast<std::size_t>(count++)] = {pairCoeffs[static_cast<std::size_t>(j)].a1,
                                                       pairState[static_cast<std::size_t>(j)].ic1};
    }
    if (count == 0)
        return;
    __m128d carry[kMaxSections];
#if defined(__x86_64__) && defined(__GNUC__)
    if (hasFma())
    {
        stretchKernelFma(list.data(), count, l, r, len, carry);
        return;
    }
#endif
    stretchKernel(list.data(), count, l, r, len, carry);
}

void ChainProcessor::runBlock(int nch, int len) noexcept
{
    double* buf[kMaxChannels];
    for (int ch = 0; ch < nch; ++ch)
        buf[ch] =
            scratch.data() + static_cast<std::size_t>(ch) * static_cast<std::size_t>(blockSize);
    const bool stereo = nch >= 2;

    int i = 0;
    while (i < numStages)
    {
        const Stage& st = stages[static_cast<std::size_t>(i)];
        if (!st.active)
        {
            ++i;
            continue;
        }
        if (!st.sections)
        {
            // Echo cancellers and combs work on every channel.
            if (st.echo >= 0)
                echoPool[static_cast<std::size_t>(st.echo)].process(buf, nch, len);
            else
                combPool[static_cast<std::size_t>(st.comb)].process(buf, nch, len);
            ++i;
            continue;
        }
        const ChannelMode mode = st.spec.channels;
        if (mode == ChannelMode::both || !stereo)
        {
            if (!stereo && mode == ChannelMode::side)
            {
                ++i; // a mono signal has no side
                continue;
            }
            // Consecutive stages on both channels run as one stretch of sections, whose
            // section state lives at fixed per-stage positions.
            int end = i;
            while (end < numStages && stages[static_cast<std::size_t>(end)].active &&
                   stages[static_cast<std::size_t>(end)].sections &&
                   (stages[static_cast<std::size_t>(end)].spec.channels == ChannelMode::both ||
                    !stereo) &&
                   !(!stereo &&
                     stages[static_cast<std::size_t>(end)].spec.channels == ChannelMode::side))
                ++end;
            if (nch == 2)
                runStereoStretch(i, end, buf[0], buf[1], len);
            else
                for (int s = i; s < end; ++s)
                    for (int ch = 0; ch < nch; ++ch)
                        runSections(ch, s * kMaxSectionsPerStage,
                                    stages[static_cast<std::size_t>(s)].count, buf[ch], len);
            i = end;
            continue;
        }

        const int base = i * kMaxSectionsPerStage;
        switch (mode)
        {
        case ChannelMode::left:
            runSections(0, base, st.count, buf[0], len);
            break;
        case ChannelMode::right:
            runSections(1, base, st.count, buf[1], len);
            break;
        case ChannelMode::mid:
        case ChannelMode::side:
        {
            double* l = buf[0];
            double* r = buf[1];
            for (int n = 0; n < len; ++n)
            {
                const double m = 0.5 * (l[n] + r[n]);
                const double sd = 0.5 * (l[n] - r[n]);
                l[n] = m;
                r[n] = sd;
            }
            // The mid or side signal uses lane 0's memories.
            runSections(0, base, st.count, mode == ChannelMode::mid ? l : r, len);
            for (int n = 0; n < len; ++n)
            {
                const double m = l[n], sd = r[n];
                l[n] = m + sd;
                r[n] = m - sd;
            }
            break;
        }
        case ChannelMode::both:
            break;
        }
        ++i;
    }
}

template <typename Sample>
void ChainProcessor::processImpl(Sample* const* channels, int numChannels, int numSamples) noexcept
{
    if (scratch.empty() || !anyActive)
        return;
    ScopedNoDenormals noDenormals;
    // Never more channels than prepared: the pooled stages hold state for that many.
    const int nch = std::min(numChannels, channelCount);
    // Samples stay in double from the first section to the last; only the block's input
    // and output are in the caller's sample type.
    for (int start = 0; start < numSamples; start += blockSize)
    {
        const int len = std::min(blockSize, numSamples - start);
        for (int ch = 0; ch < nch; ++ch)
        {
            double* b =
                scratch.data() + static_cast<std::size_t>(ch) * static_cast<std::size_t>(blockSize);
            const Sample* x = channels[ch] + start;
            for (int n = 0; n < len; ++n)
                b[n] = static_cast<double>(x[n]);
        }
        runBlock(nch, len);
        for (int ch = 0; ch < nch; ++ch)
        {
            const double* b =
                scratch.data() + static_cast<std::size_t>(ch) * static_cast<std::size_t>(blockSize);
            Sample* x = channels[ch] + start;
            for (int n = 0; n < len; ++n)
                x[n] = static_cast<Sample>(b[n]);
        }
    }
}

void ChainProcessor::process(float* const* channels, int numChannels, int numSamples) noexcept
{
    processImpl(channels, numChannels, numSamples);
}

void ChainProcessor::process(double* const* channels, int numChannels, int numSamples) noexcept
{
    processImpl(channels, numChannels, numSamples);
}

ScopedNoDenormals::ScopedNoDenormals() noexcept
{
#ifdef KERF_HAS_SSE
    saved = _mm_getcsr();
    _mm_setcsr(saved | 0x8040u); // FTZ | DAZ
#endif
}

ScopedNoDenormals::~ScopedNoDenormals() noexcept
{
#ifdef KERF_HAS_SSE
    _mm_setcsr(saved);
#endif
}

} // namespace kerf::dsp
