#pragma once
// The processing graph: a description (plain values, what chain files and parameters
// hold) and its realtime processor (prepare / reset / process).
#include "Design/PassFilters.h"
#include "Design/Sections.h"
#include "Stages/CombStage.h"
#include "Stages/EchoCanceller.h"
#include "Stages/SvfSection.h"

#include <array>
#include <cstddef>
#include <string_view>
#include <vector>

namespace kerf::dsp
{

/// Kinds of stage the chain can hold.
enum class StageType
{
    peaking,
    lowShelf,
    highShelf,
    highPass,
    lowPass,
    notch,
    bandPass,
    allPass,
    tilt,
    echoCancel,
    comb,
};
inline constexpr int kNumStageTypes = 11;
/// The parametric-section types come first: StageType values below this are sections.
inline constexpr int kNumSectionTypes = 9;

/// True for the parametric-section types (realised as second-order sections).
constexpr bool isSectionType(StageType t) noexcept
{
    return static_cast<int>(t) < kNumSectionTypes;
}

inline bool operator==(const EchoReflection& a, const EchoReflection& b) noexcept
{
    return a.delayMs == b.delayMs && a.gain == b.gain;
}
inline bool operator==(const CombSettings& a, const CombSettings& b) noexcept
{
    return a.mode == b.mode && a.delayMs == b.delayMs && a.pitchHz == b.pitchHz &&
           a.gain == b.gain && a.dampingHz == b.dampingHz && a.mix == b.mix &&
           a.interpolation == b.interpolation && a.interpolationOrder == b.interpolationOrder;
}
inline bool operator==(const EchoCancelSettings& a, const EchoCancelSettings& b) noexcept
{
    return a.reflections == b.reflections && a.numReflections == b.numReflections &&
           a.method == b.method && a.terms == b.terms &&
           a.interpolationOrder == b.interpolationOrder;
}

/// Which signal a stage works on. Mid = (L + R)/2, side = (L - R)/2; decoding L = M + S,
/// R = M - S restores the pair. On a mono signal every mode but `side` works on the one
/// channel, and a side stage does nothing (a mono signal has no side).
enum class ChannelMode
{
    both,
    left,
    right,
    mid,
    side,
};
inline constexpr int kNumChannelModes = 5;

/// Stable text names as written in chain files ("low_shelf", "mid", "linkwitz_riley"...).
std::string_view stageTypeName(StageType type) noexcept;
std::string_view channelModeName(ChannelMode mode) noexcept;
std::string_view designModeName(DesignMode mode) noexcept;
std::string_view alignmentName(PassAlignment alignment) noexcept;

/// One stage's settings, in user units. Fields a stage type does not use are ignored.
struct StageSpec
{
    StageType type = StageType::peaking;
    bool enabled = true;
    double freqHz = 1000.0; ///< centre, corner, or pivot frequency, Hz
    double gainDb = 0.0;    ///< peaking, shelf and tilt gain, dB
    /// Audio EQ Cookbook Q (> 0) for peaking, notch, band-pass and order-2 all-pass; for
    /// high-/low-pass the order-2 corner Q, where 0 means "the alignment's own".
    double q = 1.0;
    double slope = 1.0; ///< shelf slope S (Cookbook; 1 = steepest monotonic)
    int order = 2;      ///< high-/low-pass 1..8, all-pass 1..2
    PassAlignment alignment = PassAlignment::butterworth;
    ChannelMode channels = ChannelMode::both;
    DesignMode design = DesignMode::accurate;
    /// echo_cancel: the echo model and how to invert it (channels: always both).
    EchoCancelSettings echo{};
    /// echo_cancel, offline only: invert by running backwards in time (see README).
    /// The realtime processor leaves such a stage out; `kerf render` applies it.
    bool nonCausal = false;
    /// comb: feedforward or feedback comb, delay or pitch, gain, damping, mix (on every
    /// channel).
    CombSettings comb{};

    bool operator==(const StageSpec&) const = default;
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

/// The most second-order sections one stage can need (an 8th-order high-/low-pass).
inline constexpr int kMaxSectionsPerStage = kMaxDesignSections;

/// The designed second-order sections of one stage: its exact H(z) is their product.
using StageSections = DesignedSections;

/// Designs a stage's sections at a sample rate. A disabled stage, and a stage that is not a
/// parametric section (echo_cancel), has none. Pure and allocation-free.
StageSections designStage(const StageSpec& spec, double sampleRateHz) noexcept;

/// Realtime processor of a ChainSpec. Lifecycle: prepare() (allocates) -> reset() ->
/// setChain() / process() (never allocate, never lock).
class ChainProcessor
{
public:
    static constexpr int kMaxChannels = 8;
    static constexpr int kMaxStages = ChainSpec::kMaxStages;
    static constexpr int kMaxSections = kMaxStages * kMaxSectionsPerStage;
    /// Echo-cancellation stages one chain may hold (each owns delay lines from prepare()).
    static constexpr int kMaxEchoStages = 2;
    /// Comb stages one chain may hold (likewise).
    static constexpr int kMaxCombStages = 4;

    /// Sets the sample rate, largest block and channel count; clears the state.
    void prepare(double sampleRateHz, int maxBlockSize, int numChannels);
    /// Clears every filter memory.
    void reset() noexcept;
    /// Installs a new chain. Only stages whose settings changed are redesigned; filter
    /// memories carry over per stage position, and a stage that was off starts from rest.
    void setChain(const ChainSpec& chain) noexcept;

    /// Processes numSamples of numChannels in place (float or double samples). Blocks
    /// longer than the prepared size are processed in pieces.
    void process(float* const* channels, int numChannels, int numSamples) noexcept;
    void process(double* const* channels, int numChannels, int numSamples) noexcept;

    /// Whether the stereo kernel may use fused multiply-adds where the CPU has them (the
    /// default). Process-wide; tests turn it off to check the plain SSE2 kernel too.
    static void allowFusedMultiplyAdd(bool allowed) noexcept;

    double sampleRateHz() const noexcept { return sampleRate; }
    /// Second-order sections currently running (all enabled stages).
    int activeSections() const noexcept;

private:
    struct Stage
    {
        StageSpec spec;
        bool active = false;
        bool sections = true; // parametric sections; false: a pooled stage (echo or comb)
        int count = 0;        // sections, stored at [index * kMaxSectionsPerStage, + count)
        int echo = -1;        // index into echoPool (echo_cancel)
        int comb = -1;        // index into combPool (comb)
    };
    /// A section's coefficients for the stereo kernel, each value in both vector lanes,
    /// with the output mix folded: y = c0 v0 + c1 band + c2 low.
    struct alignas(16) PairCoeffs
    {
        double a1[2], a2[2], g[2], c0[2], c1[2], c2[2];
    };
    /// Integrator memories of channels 0 and 1 side by side (lane = channel).
    struct alignas(16) PairState
    {
        double ic1[2] = {0.0, 0.0}, ic2[2] = {0.0, 0.0};
    };

    template <typename Sample>
    void processImpl(Sample* const* channels, int numChannels, int numSamples) noexcept;
    void runBlock(int numChannels, int len) noexcept;
    void runSections(int channel, int firstSection, int count, double* x, int len) noexcept;
    void runStereoStretch(int first, int end, double* l, double* r, int len) noexcept;

    double sampleRate = 48000.0;
    int channelCount = 2;
    int blockSize = 0;
    int numStages = 0;
    std::array<Stage, kMaxStages> stages{};
    std::array<SvfCoeffs, kMaxSections> coeffs{};
    std::array<PairCoeffs, kMaxSections> pairCoeffs{};
    std::array<PairState, kMaxSections> pairState{}; // channels 0 and 1
    std::array<std::array<SvfState, kMaxSections>, kMaxChannels - 2> extraState{}; // 2..7
    std::vector<double> scratch; // kMaxChannels blocks of blockSize, sized in prepare()
    std::array<EchoCanceller, kMaxEchoStages> echoPool;
    std::array<CombStage, kMaxCombStages> combPool;
    bool anyActive = false;
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
