#pragma once
// The processing graph: a description (plain values, what chain files and parameters
// hold) and its realtime processor (prepare / reset / process).
#include "Stages/SvfSection.h"

#include <array>
#include <cstddef>
#include <string_view>
#include <vector>

namespace kerf::dsp
{

/// Kinds of stage the chain can hold. Later stage kinds extend this list.
enum class StageType
{
    peaking,
};

/// Stable text name of a stage type as written in chain files ("peaking").
std::string_view stageTypeName(StageType type) noexcept;

/// One stage's settings, in user units. Fields a stage type does not use are ignored.
struct StageSpec
{
    StageType type = StageType::peaking;
    bool enabled = true;
    double freqHz = 1000.0; ///< centre frequency, Hz
    double gainDb = 0.0;    ///< gain at the centre, dB
    double q = 1.0;         ///< Audio EQ Cookbook Q, > 0
};

/// A series chain of stages (fixed capacity so that copies never allocate).
struct ChainSpec
{
    static constexpr int kMaxStages = 64;
    std::array<StageSpec, kMaxStages> stages{};
    int numStages = 0;

    /// Appends a stage; returns false when the chain is full.
    bool push(const StageSpec& s) noexcept;
};

/// The most second-order sections one stage can need.
inline constexpr int kMaxSectionsPerStage = 4;

/// The designed second-order sections of one stage: its exact H(z) is their product.
struct StageSections
{
    std::array<BiquadCoeffs, kMaxSectionsPerStage> sections{};
    int count = 0;
};

/// Designs a stage's sections at a sample rate. An disabled stage has none (H = 1).
/// Pure and allocation-free.
StageSections designStage(const StageSpec& spec, double sampleRateHz) noexcept;

/// Realtime processor of a ChainSpec. Lifecycle: prepare() (allocates) -> reset() ->
/// setChain() / process() (never allocate, never lock).
class ChainProcessor
{
public:
    static constexpr int kMaxChannels = 8;
    static constexpr int kMaxSections = ChainSpec::kMaxStages * kMaxSectionsPerStage;
    static constexpr int kMaxStageSlots = ChainSpec::kMaxStages;

    /// Sets the sample rate and channel count; clears the state.
    void prepare(double sampleRateHz, int maxBlockSize, int numChannels);
    /// Clears every filter memory.
    void reset() noexcept;
    /// Designs and installs a new chain. Filter memories carry over per stage position;
    /// a stage that was off starts from rest.
    void setChain(const ChainSpec& chain) noexcept;

    /// Processes numSamples of numChannels in place (float or double samples).
    void process(float* const* channels, int numChannels, int numSamples) noexcept;
    void process(double* const* channels, int numChannels, int numSamples) noexcept;

    double sampleRateHz() const noexcept { return sampleRate; }
    int activeSections() const noexcept { return numSections; }

private:
    template <typename Sample>
    void processImpl(Sample* const* channels, int numChannels, int numSamples) noexcept;

    double sampleRate = 48000.0;
    int channelCount = 2;
    int numSections = 0;
    std::array<SvfCoeffs, kMaxSections> coeffs{};
    // Each stage owns a fixed block of state (stage i: sections i*kMaxSectionsPerStage...),
    // so enabling or disabling one stage leaves the others' memories where they were.
    std::array<int, kMaxSections> stateIndex{};
    std::array<std::array<SvfState, kMaxSections>, kMaxChannels> state{};
    std::vector<double> scratch; // one block of one channel, sized in prepare()
};

/// Flushes denormals to zero on this thread for its lifetime (x86 SSE; no-op elsewhere).
class ScopedNoDenormals
{
public:
    ScopedNoDenormals() noexcept;
    ~ScopedNoDenormals() noexcept;
    ScopedNoDenormals(const ScopedNoDenormals&) = delete;
    ScopedNoDenormals& operator=(const ScopedNoDenormals&) = delete;

private:
    unsigned int saved = 0;
};

} // namespace kerf::dsp
