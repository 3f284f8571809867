#include "Chain.h"

#include "Design/Peaking.h"

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
    }
    return "unknown";
}

bool ChainSpec::push(const StageSpec& s) noexcept
{
    if (numStages >= kMaxStages)
        return false;
    stages[static_cast<std::size_t>(numStages++)] = s;
    return true;
}

StageSections designStage(const StageSpec& spec, double sampleRateHz) noexcept
{
    StageSections out;
    if (!spec.enabled)
        return out;
    switch (spec.type)
    {
    case StageType::peaking:
        out.sections[0] = designPeakingBilinear(spec.freqHz, spec.gainDb, spec.q, sampleRateHz);
        out.count = 1;
        break;
    }
    return out;
}

void ChainProcessor::prepare(double sampleRateHz, int maxBlockSize, int numChannels)
{
    sampleRate = sampleRateHz;
    scratch.assign(static_cast<std::size_t>(std::max(maxBlockSize, 64)), 0.0);
    channelCount = std::clamp(numChannels, 1, kMaxChannels);
    reset();
}

void ChainProcessor::reset() noexcept
{
    for (auto& channel : state)
        for (auto& s : channel)
            s.reset();
}

void ChainProcessor::setChain(const ChainSpec& chain) noexcept
{
    std::array<bool, kMaxStageSlots> wasActive{};
    for (int j = 0; j < numSections; ++j)
        wasActive[static_cast<std::size_t>(stateIndex[static_cast<std::size_t>(j)] /
                                           kMaxSectionsPerStage)] = true;

    int n = 0;
    for (int i = 0; i < chain.numStages && i < kMaxStageSlots; ++i)
    {
        const StageSections sections =
            designStage(chain.stages[static_cast<std::size_t>(i)], sampleRate);
        if (sections.count > 0 && !wasActive[static_cast<std::size_t>(i)])
            for (auto& channel : state)
                for (int j = 0; j < kMaxSectionsPerStage; ++j)
                    channel[static_cast<std::size_t>(i * kMaxSectionsPerStage + j)].reset();
        for (int j = 0; j < sections.count; ++j)
        {
            coeffs[static_cast<std::size_t>(n)] =
                toSvf(sections.sections[static_cast<std::size_t>(j)]);
            stateIndex[static_cast<std::size_t>(n)] = i * kMaxSectionsPerStage + j;
            ++n;
        }
    }
    numSections = n;
}

template <typename Sample>
void ChainProcessor::processImpl(Sample* const* channels, int numChannels, int numSamples) noexcept
{
    if (numSections == 0 || scratch.empty())
        return;
    ScopedNoDenormals noDenormals;
    const int nch = std::min(numChannels, kMaxChannels);
    const int chunk = static_cast<int>(scratch.size());
    double* buf = scratch.data();
    // Samples stay in double from the first section to the last; only the block's
    // input and output are in the caller's sample type.
    for (int ch = 0; ch < nch; ++ch)
    {
        auto& st = state[static_cast<std::size_t>(ch)];
        for (int start = 0; start < numSamples; start += chunk)
        {
            const int len = std::min(chunk, numSamples - start);
            Sample* x = channels[ch] + start;
            for (int n = 0; n < len; ++n)
                buf[n] = static_cast<double>(x[n]);
            for (int j = 0; j < numSections; ++j)
            {
                const SvfCoeffs c = coeffs[static_cast<std::size_t>(j)];
                SvfState& slot =
                    st[static_cast<std::size_t>(stateIndex[static_cast<std::size_t>(j)])];
                SvfState s = slot;
                for (int n = 0; n < len; ++n)
                    buf[n] = processSvf(c, s, buf[n]);
                slot = s;
            }
            for (int n = 0; n < len; ++n)
                x[n] = static_cast<Sample>(buf[n]);
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
