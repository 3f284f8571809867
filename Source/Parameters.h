#pragma once
// The plugin's parameter layout and its mapping to and from a chain description.
#include "Chain.h"

#include <juce_audio_processors/juce_audio_processors.h>

#include <array>
#include <vector>

namespace kerf
{

/// Choices of the alignment parameter: the two alignments, and a resonant order-2 corner
/// whose Q is the slot's Q.
enum class SlotAlignment
{
    butterworth,
    linkwitzRiley,
    resonant,
};

/// Largest |gain| of a reflection in the plugin: the live inverse must stay causal.
inline constexpr float kPluginEchoGainMax = 0.95f;

/// Parameter-layout version hint passed to juce::ParameterID: the version in which a
/// parameter first appeared (hosts order and keep parameters by it; IDs never change).
inline constexpr int kParameterVersion = 1;
/// Version hint of parameters added with the click-free layer (the glide time).
inline constexpr int kParameterVersionGlide = 2;
/// Version hint of the plugin's own bypass (the host's bypass switch, faded).
inline constexpr int kParameterVersionBypass = 3;
/// Version hint of the combs' delay-change choice (crossfade or sweep).
inline constexpr int kParameterVersionSweep = 4;
/// Section slots the plugin offers.
inline constexpr int kNumSectionSlots = 24;
/// Comb slots the plugin offers (after the sections in the chain).
inline constexpr int kNumCombSlots = 2;
/// Damping frequency at or above which a comb slot's damping is off.
inline constexpr float kCombDampingOffHz = 20000.0f;

/// Parameter IDs. Host automation and saved sessions refer to these strings: never rename.
namespace ids
{
juce::String slotOn(int slot);     ///< "sec01_on"
juce::String slotFreq(int slot);   ///< "sec01_freq"
juce::String slotGain(int slot);   ///< "sec01_gain"
juce::String slotQ(int slot);      ///< "sec01_q"
juce::String slotType(int slot);   ///< "sec01_type"
juce::String slotSlope(int slot);  ///< "sec01_slope"
juce::String slotOrder(int slot);  ///< "sec01_order"
juce::String slotAlign(int slot);  ///< "sec01_align"
juce::String slotChan(int slot);   ///< "sec01_chan"
juce::String slotDesign(int slot); ///< "sec01_design"
inline const juce::String outputGain = "out_gain";
inline const juce::String protectOn = "protect_on";
inline const juce::String protectCeiling = "protect_ceiling";
/// Glide and crossfade time of every change, ms (0 = the shortest clean move).
inline const juce::String glideMs = "glide_ms";
/// The plugin's bypass, offered to hosts as their bypass switch; crossfaded, never a click.
inline const juce::String bypass = "bypass";
inline const juce::String echoOn = "echo_on";
inline const juce::String echoMethod = "echo_method";
inline const juce::String echoTerms = "echo_terms";
juce::String echoDelay(int reflection); ///< "echo_r1_delay" (reflection 0)
juce::String echoGain(int reflection);  ///< "echo_r1_gain"
/// Comb slot fields: "comb1_on", "comb1_mode", "comb1_tuning", "comb1_delay", "comb1_pitch",
/// "comb1_gain", "comb1_damp", "comb1_mix" (slot 0 is comb1).
juce::String comb(int slot, const char* field);
} // namespace ids

/// Builds the full parameter layout.
juce::AudioProcessorValueTreeState::ParameterLayout createParameterLayout();

/// Default centre frequency of a slot (spread log-evenly so new bands do not pile up).
double defaultSlotFreqHz(int slot);

/// Cached raw parameter pointers for reading on the audio thread without lookups.
struct ParameterRefs
{
    struct Slot
    {
        std::atomic<float>* on = nullptr;
        std::atomic<float>* freq = nullptr;
        std::atomic<float>* gain = nullptr;
        std::atomic<float>* q = nullptr;
        std::atomic<float>* type = nullptr;
        std::atomic<float>* slope = nullptr;
        std::atomic<float>* order = nullptr;
        std::atomic<float>* align = nullptr;
        std::atomic<float>* chan = nullptr;
        std::atomic<float>* design = nullptr;
    };
    std::array<Slot, kNumSectionSlots> slots{};
    std::atomic<float>* outputGainDb = nullptr;
    std::atomic<float>* protectOn = nullptr;
    std::atomic<float>* protectCeilingDb = nullptr;
    std::atomic<float>* glideMs = nullptr;
    std::atomic<float>* bypass = nullptr;
    std::atomic<float>* echoOn = nullptr;
    std::atomic<float>* echoMethod = nullptr;
    std::atomic<float>* echoTerms = nullptr;
    std::array<std::atomic<float>*, dsp::kMaxEchoReflections> echoDelayMs{};
    std::array<std::atomic<float>*, dsp::kMaxEchoReflections> echoGain{};
    struct Comb
    {
        std::atomic<float>*on = nullptr, *mode = nullptr, *tuning = nullptr, *delay = nullptr,
        *pitch = nullptr, *gain = nullptr, *damp = nullptr, *mix = nullptr, *change = nullptr;
    };
    std::array<Comb, kNumCombSlots> combs{};

    /// Every parameter of the processor (readChain's inputs among them), in its order.
    std::vector<std::atomic<float>*> all;

    explicit ParameterRefs(juce::AudioProcessorValueTreeState& state);

    /// Copies every parameter's value (`all`, in order) to out[0 .. all.size()), so that
    /// the audio thread can tell whether the chain may have changed since it last read it
    /// by a comparison instead of a new snapshot. No allocation.
    void readAll(float* out) const noexcept;

    /// Snapshot of the chain the parameters describe: stage 0 is the echo canceller (off
    /// unless echo_on and a reflection has a gain), stages 1..24 the section slots, 25..26 the
    /// comb slots.
    /// No allocation.
    void readChain(dsp::ChainSpec& out) const noexcept;
};

/// Sets every parameter from a chain: its echo_cancel stage (at most one, causal) sets the
/// echo parameters, its section stages fill the slots in order, remaining slots switch off.
/// Returns false (with a reason) when the chain does not fit. Message thread.
bool applyChainToParameters(const dsp::ChainSpec& chain, juce::AudioProcessorValueTreeState& state,
                            juce::String& error);

/// The chain the parameters describe, keeping only the slots that are switched on.
dsp::ChainSpec chainFromParameters(const ParameterRefs& refs);
dsp::ChainSpec chainFromParameters(const juce::AudioProcessorValueTreeState& state);

} // namespace kerf
