#pragma once
// The Kerf AudioProcessor: adapts JUCE buffers and parameters to the Dsp core.
#include "Analysis/AnalyzerFifo.h"
#include "Chain.h"
#include "EchoCapture.h"
#include "EditHistory.h"
#include "Parameters.h"
#include "Stages/OutputProtection.h"
#include "UserPresets.h"
#include "Vst3Automation.h"

#include <atomic>
#include <juce_audio_processors/juce_audio_processors.h>

#include <mutex>
#include <optional>

namespace kerf
{

/// Version written into saved plugin state; restore code upgrades anything older.
inline constexpr int kStateVersion = 1;

/// The two comparison slots (A/B).
enum class CompareSlot
{
    a,
    b
};

/// Plugin, standalone and test host all run this processor.
class KerfProcessor : public juce::AudioProcessor, public juce::VST3ClientExtensions
{
public:
    KerfProcessor();
    ~KerfProcessor() override = default;

    void prepareToPlay(double sampleRate, int samplesPerBlock) override;
    void releaseResources() override {}
    /// Clears every filter and delay memory (hosts call it on transport jumps).
    void reset() override { chain.reset(); }
    bool isBusesLayoutSupported(const BusesLayout& layouts) const override;
    void processBlock(juce::AudioBuffer<float>&, juce::MidiBuffer&) override;
    void processBlock(juce::AudioBuffer<double>&, juce::MidiBuffer&) override;
    bool supportsDoublePrecisionProcessing() const override { return true; }
    /// The plugin's own bypass ("bypass"): hosts switch it instead of skipping the plugin,
    /// and the output crossfades to the untouched input over the glide time (no click).
    juce::AudioProcessorParameter* getBypassParameter() const override;

    juce::AudioProcessorEditor* createEditor() override;
    bool hasEditor() const override { return true; }

    const juce::String getName() const override { return "Kerf"; }
    bool acceptsMidi() const override { return false; }
    bool producesMidi() const override { return false; }
    bool isMidiEffect() const override { return false; }
    /// From the current feedback combs, echo stage and sections (chainTailSeconds).
    double getTailLengthSeconds() const override;

    /// Factory presets appear to hosts as programs; program 0 is "Flat".
    int getNumPrograms() override;
    int getCurrentProgram() override { return currentProgram; }
    void setCurrentProgram(int index) override;
    const juce::String getProgramName(int index) override;
    void changeProgramName(int, const juce::String&) override {}

    void getStateInformation(juce::MemoryBlock& destData) override;
    void setStateInformation(const void* data, int sizeInBytes) override;

    /// Loads a chain into the parameters (message thread) as one undo step called
    /// `stepName`. Returns an error text or "" (on error nothing changes).
    juce::String importChain(const dsp::ChainSpec& chain,
                             const juce::String& stepName = "Load chain");
    /// The chain the current parameters describe.
    dsp::ChainSpec exportChain() const;
    /// Reads a chain file and loads it (one undo step). Returns an error text or "".
    juce::String importChainFile(const juce::File& file);
    /// Writes the current chain as a chain file (written whole, then renamed into place).
    /// Returns an error text or "".
    juce::String exportChainFile(const juce::File& file, const juce::String& name = {}) const;

    // ---- User presets: chain files under the XDG config folder (UserPresetFolder). --------
    /// The folder and its listing.
    const UserPresetFolder& userPresets() const noexcept { return presetFolder; }
    /// Saves the current chain as a user preset (replacing one of the same name).
    juce::String saveUserPreset(const juce::String& name) const;
    /// Loads a user preset (one undo step). Returns an error text or "".
    juce::String loadUserPreset(const juce::String& name);
    /// Deletes a user preset. Returns an error text or "".
    juce::String deleteUserPreset(const juce::String& name);

    // ---- Two comparison slots (message thread). A slot holds every parameter's value. ----
    /// The slot the current settings belong to (A at start).
    CompareSlot activeSlot() const noexcept { return active; }
    /// Whether a slot has been stored yet.
    bool slotHolds(CompareSlot slot) const noexcept;
    /// Keeps the current settings in `slot` (changes no sound; not an undo step).
    void storeSlot(CompareSlot slot);
    /// Loads `slot` and makes it active (one undo step). False when the slot is empty.
    bool recallSlot(CompareSlot slot);
    /// The A/B switch: keeps the current settings in the active slot, loads the other one
    /// (an empty slot first receives a copy of the current settings) and makes it active.
    /// One undo step; undo also returns the slots and the active one to where they were.
    void switchSlot();

    /// "All flat": switches off every section slot, both combs and the echo stage at once
    /// (their settings stay, so undo or switching them on again brings them back); output
    /// gain, protection and glide time are left alone. One undo step.
    void setAllFlat();
    /// Whether every section, comb and the echo stage is off.
    bool isAllFlat() const;

    // ---- Undo and redo of every edit (EditHistory) -----------------------------------------
    EditHistory& history() noexcept { return edits; }
    bool undo() { return edits.undo(); }
    bool redo() { return edits.redo(); }

    juce::AudioProcessorValueTreeState& state() noexcept { return parameters; }
    /// Samples the output protection has changed since the last call.
    std::int64_t takeProtectionCount() noexcept { return protection.takeTouchedCount(); }
    /// Blocks whose input held samples that were not numbers (processed as silence), plus the
    /// times a stage of the chain ran away (silenced and cleared at once).
    unsigned nonFiniteEvents() const noexcept
    {
        return nonFiniteBlocks.load(std::memory_order_relaxed) + chain.nonFiniteEvents();
    }
    /// The "listen for room echo" action (message thread: start, cancel, take the proposal).
    EchoCapture& echoCapture() noexcept { return capture; }
    /// Sets the echo parameters from an accepted estimate (message thread; one undo step).
    void applyEchoEstimate(const dsp::EchoEstimate& estimate);

    // ---- The live analyzer's feed (LiveAnalyzer, Gui/AnalyzerView) -------------------------
    /// Switches the audio thread's copy of the input's and the output's mono sums into
    /// analyzerFifo() on or off (any thread). Off by default; while off, processBlock does one
    /// relaxed atomic load for it and nothing else.
    void setAnalyzerFeed(bool on) noexcept { analyzerFeed.store(on, std::memory_order_relaxed); }
    bool analyzerFeedOn() const noexcept { return analyzerFeed.load(std::memory_order_relaxed); }
    /// The feed (one consumer thread pops; full means dropped and counted, never waiting).
    dsp::AnalyzerFifo& analyzerFifo() noexcept { return analyzerQueue; }
    /// The sample rate of what the feed carries (0 before prepareToPlay; any thread).
    double analyzerSampleRate() const noexcept
    {
        return analyzerRate.load(std::memory_order_relaxed);
    }

    // ---- What the editor keeps in the session (any thread; saved with the state) ----------
    /// The editor's size in its own (unscaled) pixels, 0 x 0 before an editor has been open
    /// (the editor then opens at its default size), and whether the live analyzer is on.
    struct EditorSettings
    {
        int width = 0, height = 0;
        bool analyzerOn = false;
    };
    EditorSettings editorSettings() const noexcept;
    /// The editor records its size here whenever it is resized.
    void setEditorSize(int width, int height) noexcept;
    /// The editor records its analyzer switch here (off by default). The audio feed is
    /// separate (setAnalyzerFeed): it runs only while an editor shows the analyzer.
    void setAnalyzerSwitch(bool on) noexcept;
    /// Counts restores (setStateInformation) that replaced the editor settings, so that an
    /// open editor takes the restored size and switch.
    int editorSettingsGeneration() const noexcept
    {
        return editorGeneration.load(std::memory_order_acquire);
    }

    /// VST3: hands the host an IAudioProcessor that places automation points where the host
    /// puts them inside a block (Vst3Automation.h).
    int32_t queryIAudioProcessor(const Steinberg::TUID iid, void** obj) override;

    /// Why the last state restore fell back to defaults ("" when it did not); the reason is
    /// also written to juce::Logger (the host's log, or stderr).
    juce::String lastStateProblem() const { return stateProblem; }

private:
    template <typename Sample> void processAny(juce::AudioBuffer<Sample>& buffer);
    template <typename Sample> void processPiece(juce::AudioBuffer<Sample>& buffer);
    template <typename Sample>
    void applyBypassCrossfade(juce::AudioBuffer<Sample>& buffer, int dryChannels,
                              double wetTarget) noexcept;
    void resetToDefaults();
    template <typename Sample>
    static void monoSum(const juce::AudioBuffer<Sample>& buffer, int channels, float* out,
                        int numSamples) noexcept;

    juce::AudioProcessorValueTreeState parameters;
    ParameterRefs refs;
    dsp::ChainProcessor chain;
    std::atomic<unsigned> nonFiniteBlocks{0};
    dsp::ChainSpec snapshot; // reused every block: no allocation
    // Every parameter's value (ParameterRefs::all) as read just before `snapshot` was
    // (sized at construction).
    std::vector<float> readValues;
    bool parametersMoved() noexcept;
    dsp::OutputProtection protection;
    EchoCapture capture;
    Vst3AutomationSplitterPtr automationSplitter; // made at the first VST3 query
    std::once_flag automationSplitterMade;
    double lastOutputGain = 1.0;
    juce::AudioBuffer<double> dryCopy; // the input, for the bypass crossfade
    double wetAmount = 1.0;            // 1 = processed, 0 = bypassed (crossfade position)
    std::atomic<bool> analyzerFeed{false};
    dsp::AnalyzerFifo analyzerQueue{1 << 15};   // 0.68 s at 48 kHz; allocated once, here
    std::vector<float> analyzerIn, analyzerOut; // a piece's mono sums, sized in prepareToPlay
    std::atomic<double> analyzerRate{0.0};
    std::atomic<int> editorWidth{0}, editorHeight{0}, editorGeneration{0};
    std::atomic<bool> analyzerSwitch{false};
    void restoreEditorSettings(const juce::XmlElement* state);
    int currentProgram = 0;
    juce::String stateProblem;
    UserPresetFolder presetFolder;
    EditHistory edits{*this};
    // Written on the message thread; read under the lock by getStateInformation, which
    // some hosts call from another thread.
    std::optional<EditHistory::Values> slots[2];
    CompareSlot active = CompareSlot::a;
    juce::CriticalSection slotLock;
    void setSlots(std::optional<EditHistory::Values> a, std::optional<EditHistory::Values> b,
                  CompareSlot activeSlot);
    void setActive(CompareSlot slot);
    juce::String loadChain(const dsp::ChainSpec& chain, const juce::String& stepName,
                           std::function<void()> undoExtra, std::function<void()> redoExtra);
    void restoreSlots(const juce::XmlElement& state);

    JUCE_DECLARE_NON_COPYABLE_WITH_LEAK_DETECTOR(KerfProcessor)
};

} // namespace kerf
