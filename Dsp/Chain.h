#pragma once
// The processing graph: a description (plain values, what chain files and parameters
// hold) and its realtime processor (prepare / reset / process).
#include "Design/PassFilters.h"
#include "Design/Sections.h"
#include "Smoothing/Transition.h"
#include "Stages/CombStage.h"
#include "Stages/EchoCanceller.h"
#include "Stages/SvfSection.h"

#include <array>
#include <atomic>
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
           a.interpolation == b.interpolation && a.interpolationOrder == b.interpolationOrder &&
           a.sweepDelay == b.sweepDelay;
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
    /// Installs a new chain. The first chain after prepare() or reset() (before any sample is
    /// processed) takes effect at once. Later chains are targets the click-free layer moves
    /// to (Smoothing/Transition.h), taken at the next update (every kUpdateIntervalSamples
    /// samples of the processor's own clock): stage by stage, moderate moves of frequency,
    /// gain, Q and slope glide over the glide time; anything else crossfades. Stages whose
    /// settings did not change are untouched, and filter memories carry over.
    void setChain(const ChainSpec& chain) noexcept;
    /// Glide and crossfade time, ms (default kDefaultGlideMs; crossfades take at least
    /// kMinTransitionMs, glides at least kMinGlideMs).
    void setGlideMs(double ms) noexcept;
    double glideMs() const noexcept { return glideMs_; }
    /// True while any stage glides, crossfades or waits for the next update.
    bool isMoving() const noexcept;

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
    /// Times Kerf met a sample that was not a finite number: in the input (a process call
    /// whose input held any; processed as silence), or a stage that ran away (its output not
    /// finite or beyond +180 dBFS: those samples silenced and that stage's memories cleared
    /// at once). Neither ever reaches the output.
    unsigned nonFiniteEvents() const noexcept { return nonFinite.load(std::memory_order_relaxed); }

private:
    /// Section banks per stage: a crossfade runs the old and the new sections side by side.
    static constexpr int kBanks = 2;
    static constexpr int kMaxSectionSlots = kBanks * kMaxSections;
    /// One instance of a stage: its sections (a bank) or an echo canceller or comb from a pool.
    struct Voice
    {
        enum class Kind
        {
            none,
            sections,
            echo,
            comb
        } kind = Kind::none;
        int bank = 0;  // sections: bank 0 or 1
        int count = 0; // sections: how many, at section slot bank*kMaxSections + stage*4 + j
        ChannelMode channels = ChannelMode::both;
        int first = 0; // sections: slot of the first, bank * kMaxSections + stage * 4
        int pool = -1; // echo/comb: index into echoPool / combPool
    };
    struct Stage
    {
        StageSpec spec; // the settings the live voice has or glides to
        Voice live;     // what runs (and, during a crossfade, fades in)
        Voice out;      // during a crossfade: what fades out
        bool fading = false;
        int fadePos = 0, fadeLen = 0;
        bool queued = false; // a change that waits for the running crossfade to end
        StageSpec queuedSpec;
        bool queuedAllowed = true;
        /// While the live sections glide: the settings carried along the same curve (where
        /// the stage is, in the units sectionsCanGlide judges), over [glideStart, + glideLen).
        bool settingsGliding = false;
        long long glideStart = 0;
        int glideLen = 0;
        SettingsPath settingsPath;
        double settingsTo[4] = {}; // the coordinates of spec while settingsGliding
    };
    /// A section's glide in the natural domain (Smoothing/Transition.h).
    struct Glide
    {
        bool on = false;
        long long start = 0;   // clock where the glide began (an update point)
        int len = 0;           // samples
        double invLen = 0.0;   // 1 / len
        int step = 0;          // knot interval (glideKnotSamples(len))
        long long knotEnd = 0; // clock of the running segment's end (the next knot)
        GlidePath path;
        double slope[8] = {}; // d(folded values)/dn at knotEnd (six, then two zeros)
        SvfCoeffs target;
        /// The time fraction of the glide at clock c (GlidePath's t).
        double tAt(long long c) const noexcept { return static_cast<double>(c - start) * invLen; }
    };
    /// A section's coefficients for the stereo kernel, each value in both vector lanes,
    /// with the output mix folded: y = c0 v0 + c1 band + c2 low.
    struct alignas(16) PairCoeffs
    {
        double a1[2], a2[2], g[2], c0[2], c1[2], c2[2];
    };
    /// A section's folded values once each (a1, a2, g, c0, c1, c2, then two zeros): the
    /// form glides use (four of them, one per power of n, make a section's cubic).
    struct alignas(32) RampCoeffs
    {
        double v[8] = {0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0};
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
    void runStereoStretch(int first, int end, double* l, double* r, int len, int pair) noexcept;
    static int slot(int bank, int stage, int j) noexcept
    {
        return bank * kMaxSections + stage * kMaxSectionsPerStage + j;
    }
    // Click-free layer (Chain.cpp, "transitions").
    void installNow(const ChainSpec& chain) noexcept;
    Voice makeVoice(int stage, const StageSpec& spec, int bank, bool allowed) noexcept;
    void setSectionCoeffs(int idx, const SvfCoeffs& c) noexcept;
    void releaseVoice(Voice& v) noexcept;
    void retarget(int stage, const StageSpec& spec, bool allowed) noexcept;
    void startCrossfade(int stage, const StageSpec& spec, bool allowed) noexcept;
    /// Where a stage's settings are and how they move, for a new glide `len` samples long
    /// (SettingsPath's coordinates; rates per unit t of the new glide), and its target.
    struct SettingsMotion
    {
        int len = 0;
        double at[4], velocity[4], accel[4], to[4];
        double span = 1.0;
    };
    SettingsMotion settingsNow(const Stage& st, const StageSpec& target) const noexcept;
    void startGlide(int stage, const StageSpec& spec, const SettingsMotion& motion) noexcept;
    void freezeGlides(const Voice& v) noexcept;
    void update() noexcept; // at every update point while something moves
    /// Starts a segment's cubic: end values and slopes, six each then two zeros.
    void startCubic(int idx, const double end[8], const double endSlope[8], int length) noexcept;
    /// A gliding section's folded values at the current clock, from its running cubic, and
    /// (if `slope` is given) their slopes per sample.
    void foldedNow(int idx, double out[6], double* slope = nullptr) const noexcept;
    void runFading(int stage, int numChannels, int len) noexcept;
    void addVoice(const Voice& v, const double* wIn, const double* wOut, double* const* x,
                  double* const* acc, int numChannels, int len) noexcept;

    double sampleRate = 48000.0;
    int channelCount = 2;
    int blockSize = 0;
    int numStages = 0;
    std::array<Stage, kMaxStages> stages{};
    std::array<SvfCoeffs, kMaxSectionSlots> coeffs{};
    std::array<PairCoeffs, kMaxSectionSlots> pairCoeffs{};
    // While a section glides, its folded values follow a cubic in n, the samples since its
    // last knot (rampOrigin): the Hermite cubic that starts on the path's exact values and
    // slope there and ends on its exact values and slope at its next knot (rampKnot holds
    // those), so values and slopes run on without a break. The kernels evaluate it at each
    // sample (Horner), so any piece of a block gets the same values. Not gliding: rampKnot
    // holds the values (the cubic is that constant).
    struct RampCubic
    {
        RampCoeffs c[4]; // value = c0 + n (c1 + n (c2 + n c3)), per folded value
    };
    std::array<RampCubic, kMaxSectionSlots> rampCubic{};
    std::array<RampCoeffs, kMaxSectionSlots> rampKnot{};
    std::array<bool, kMaxSectionSlots> ramping{};
    std::array<long long, kMaxSectionSlots> rampOrigin{}; // clock where each cubic starts
    // The next update: the earliest knot of any glide, or the next update point while
    // anything else moves (a crossfade, a queued change) or a target waits.
    long long nextKnot = 0;
    bool everyUpdate = false; // a crossfade or queued change: update at every update point
    // Working room of the pair kernel (Chain.cpp, runSectionPairs): two sections (still or
    // gliding) per 480-byte entry, laid out for one 256-bit register.
    struct alignas(32) GlidePairRoom
    {
        double v[60];
    };
    std::array<GlidePairRoom, kMaxSections / 2 + 1> glidePairs{};
    void runSectionPairs(const void* sectionList, int count, double* l, double* r, int len,
                         bool moving) noexcept;
    std::array<Glide, kMaxSectionSlots> glides{};
    // Section memories of channels 2k and 2k + 1 in pairState[k], lanes as the stereo
    // kernels use them.
    std::array<std::array<PairState, kMaxSectionSlots>, kMaxChannels / 2> pairState{};
    std::vector<double> scratch; // kMaxChannels blocks of blockSize, sized in prepare()
    // Channel blocks lie 64 bytes more than a block apart: at a whole number of 4 KiB (512
    // samples) the kernels' loads of one channel waited on stores to the other, the CPU
    // matching addresses by their low 12 bits (a mono chain measured 17.0 us a block with
    // its silent lane 4 KiB after the signal, 11.8 us without).
    std::size_t scratchStride() const noexcept { return static_cast<std::size_t>(blockSize) + 8; }
    double* channelScratch(int ch) noexcept
    {
        return scratch.data() + static_cast<std::size_t>(ch) * scratchStride();
    }
    // Two instances per stage the chain may hold: a crossfade runs old and new together.
    std::array<EchoCanceller, 2 * kMaxEchoStages> echoPool;
    std::array<CombStage, 2 * kMaxCombStages> combPool;
    std::array<bool, 2 * kMaxEchoStages> echoBusy{};
    std::array<bool, 2 * kMaxCombStages> combBusy{};
    bool anyActive = false;
    // Click-free layer.
    double glideMs_ = kDefaultGlideMs;
    ChainSpec pending{};
    bool hasPending = false;
    int targetStages = 0; // stages of the chain last given (numStages may run longer)
    bool started = false; // a sample was processed since prepare() / reset()
    long long clock = 0;  // samples processed since prepare() / reset()
    int movingStages = 0; // stages gliding or crossfading (recounted at every update)
    std::atomic<unsigned> nonFinite{0};
    void clearMemories() noexcept; // every filter memory to rest (settings and clock stay)
    void clearStageMemories(int first, int end) noexcept; // stages [first, end) to rest
    /// Runs stage i (or the stretch of section stages from i) and moves i past it; false
    /// when there was nothing to run.
    template <typename Stretchable>
    bool runUnit(int& i, int nch, int len, double* const* buf,
                 const Stretchable& stretchable) noexcept;
};

/// Replaces every sample that is not a finite number (NaN, infinities) by silence; true when
/// there was one (float and double).
template <typename Sample> bool silenceNonFinite(Sample* x, int n) noexcept;

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
