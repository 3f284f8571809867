#include "Chain.h"

#include "Design/Band.h"
#include "Design/Peaking.h"
#include "Design/Shelf.h"
#include "Design/Tilt.h"

#include <algorithm>

#if defined(__SSE__) || defined(_M_X64)
#include <xmmintrin.h>
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
    }
    return out;
}

void ChainProcessor::prepare(double sampleRateHz, int maxBlockSize, int numChannels)
{
    sampleRate = sampleRateHz;
    channelCount = std::clamp(numChannels, 1, kMaxChannels);
    blockSize = std::max(maxBlockSize, 64);
    scratch.assign(static_cast<std::size_t>(blockSize) * kMaxChannels, 0.0);
    // Designs depend on the rate: force a redesign on the next setChain().
    for (auto& st : stages)
        st = Stage{};
    numStages = 0;
    reset();
}

void ChainProcessor::reset() noexcept
{
    for (auto& channel : state)
        for (auto& s : channel)
            s.reset();
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
    for (int i = 0; i < n; ++i)
    {
        auto& st = stages[static_cast<std::size_t>(i)];
        const StageSpec& spec = chain.stages[static_cast<std::size_t>(i)];
        const bool wasActive = st.active && i < numStages;
        if (wasActive && spec == st.spec)
            continue;
        const StageSections designed = designStage(spec, sampleRate);
        const int base = i * kMaxSectionsPerStage;
        for (int j = 0; j < designed.count; ++j)
        {
            coeffs[static_cast<std::size_t>(base + j)] =
                toSvf(designed.sections[static_cast<std::size_t>(j)]);
            // A section that was not running (stage off, or fewer sections before) starts
            // from rest; running ones keep their memories.
            if (!wasActive || j >= st.count)
                for (auto& channel : state)
                    channel[static_cast<std::size_t>(base + j)].reset();
        }
        st.spec = spec;
        st.count = designed.count;
        st.active = designed.count > 0;
    }
    for (int i = n; i < numStages; ++i)
        stages[static_cast<std::size_t>(i)].active = false;
    numStages = n;
}

namespace
{
/// Runs sections [first, first + count) over one channel's samples.
void runSections(const SvfCoeffs* c, SvfState* st, int count, double* x, int len) noexcept
{
    for (int j = 0; j < count; ++j)
    {
        const SvfCoeffs k = c[j];
        SvfState s = st[j];
        for (int n = 0; n < len; ++n)
            x[n] = processSvf(k, s, x[n]);
        st[j] = s;
    }
}

#if defined(__GNUC__)
typedef double Pair __attribute__((vector_size(16)));

/// One sample pair through one section, both channels in one vector register.
inline Pair processSvfPair(const SvfCoeffs& k, SvfState& sl, SvfState& sr, Pair v0) noexcept
{
    const Pair ic1 = {sl.ic1eq, sr.ic1eq};
    const Pair ic2 = {sl.ic2eq, sr.ic2eq};
    const Pair v3 = v0 - ic2;
    const Pair v1 = k.a1 * ic1 + k.a2 * v3;
    const Pair v2 = ic2 + k.a2 * ic1 + k.a3 * v3;
    const Pair n1 = 2.0 * v1 - ic1;
    const Pair n2 = 2.0 * v2 - ic2;
    sl.ic1eq = n1[0];
    sr.ic1eq = n1[1];
    sl.ic2eq = n2[0];
    sr.ic2eq = n2[1];
    const Pair high = v0 - k.k * v1 - v2;
    return k.mHigh * high + k.mBand * v1 + k.mLow * v2;
}
#endif
} // namespace

void ChainProcessor::runStereoStretch(int first, int end, double* l, double* r, int len) noexcept
{
#if defined(__GNUC__)
    // Sample by sample through every section of the stretch: consecutive sections are
    // independent at any instant, so their arithmetic overlaps in the CPU's pipeline
    // instead of waiting on one section's recursion; both channels share the vector.
    for (int n = 0; n < len; ++n)
    {
        Pair v = {l[n], r[n]};
        for (int s = first; s < end; ++s)
        {
            const int base = s * kMaxSectionsPerStage;
            const int count = stages[static_cast<std::size_t>(s)].count;
            for (int j = base; j < base + count; ++j)
                v = processSvfPair(coeffs[static_cast<std::size_t>(j)],
                                   state[0][static_cast<std::size_t>(j)],
                                   state[1][static_cast<std::size_t>(j)], v);
        }
        l[n] = v[0];
        r[n] = v[1];
    }
#else
    for (int s = first; s < end; ++s)
    {
        const int base = s * kMaxSectionsPerStage;
        const int count = stages[static_cast<std::size_t>(s)].count;
        runSections(&coeffs[static_cast<std::size_t>(base)],
                    &state[0][static_cast<std::size_t>(base)], count, l, len);
        runSections(&coeffs[static_cast<std::size_t>(base)],
                    &state[1][static_cast<std::size_t>(base)], count, r, len);
    }
#endif
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
                   (stages[static_cast<std::size_t>(end)].spec.channels == ChannelMode::both ||
                    !stereo) &&
                   !(!stereo &&
                     stages[static_cast<std::size_t>(end)].spec.channels == ChannelMode::side))
                ++end;
            if (nch == 2)
                runStereoStretch(i, end, buf[0], buf[1], len);
            else
                for (int s = i; s < end; ++s)
                {
                    const int base = s * kMaxSectionsPerStage;
                    for (int ch = 0; ch < nch; ++ch)
                        runSections(
                            &coeffs[static_cast<std::size_t>(base)],
                            &state[static_cast<std::size_t>(ch)][static_cast<std::size_t>(base)],
                            stages[static_cast<std::size_t>(s)].count, buf[ch], len);
                }
            i = end;
            continue;
        }

        const int base = i * kMaxSectionsPerStage;
        const SvfCoeffs* c = &coeffs[static_cast<std::size_t>(base)];
        SvfState* s0 = &state[0][static_cast<std::size_t>(base)];
        switch (mode)
        {
        case ChannelMode::left:
            runSections(c, s0, st.count, buf[0], len);
            break;
        case ChannelMode::right:
            runSections(c, &state[1][static_cast<std::size_t>(base)], st.count, buf[1], len);
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
            runSections(c, s0, st.count, mode == ChannelMode::mid ? l : r, len);
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
    if (scratch.empty() || activeSections() == 0)
        return;
    ScopedNoDenormals noDenormals;
    const int nch = std::min(numChannels, kMaxChannels);
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
