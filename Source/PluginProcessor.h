#pragma once
// The Kerf AudioProcessor: adapts JUCE buffers and parameters to the Dsp core.
#include "Chain.h"
#include "EchoCapture.h"
#include "Parameters.h"
#include "Stages/OutputProtection.h"

#include <juce_audio_processors/juce_audio_processors.h>

namespace kerf
{

/// Version written into saved plugin state; restore code upgrades anything older.
inline constexpr int kStateVersion = 1;

/// Plugin, standalone and test host all run this processor.
class KerfProcessor : public juce::AudioProcessor
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

    /// Loads a chain into the parameters (message thread). Returns an error text or "".
    juce::String importChain(const dsp::ChainSpec& chain);
    /// The chain the current parameters describe.
    dsp::ChainSpec exportChain() const;

    juce::AudioProcessorValueTreeState& state() noexcept { return parameters; }
    /// Samples the output protection has changed since the last call.
    std::int64_t takeProtectionCount() noexcept { return protection.takeTouchedCount(); }
    /// The "listen for room echo" action (message thread: start, cancel, take the proposal).
    EchoCapture& echoCapture() noexcept { return capture; }
    /// Sets the echo parameters from an accepted estimate (message thread).
    void applyEchoEstimate(const dsp::EchoEstimate& estimate);

    /// Why the last state restore fell back to defaults ("" when it did not).
    juce::String lastStateProblem() const { return stateProblem; }

private:
    template <typename Sample> void processAny(juce::AudioBuffer<Sample>& buffer);
    void resetToDefaults();

    juce::AudioProcessorValueTreeState parameters;
    ParameterRefs refs;
    dsp::ChainProcessor chain;
    dsp::ChainSpec snapshot; // reused every block: no allocation
    dsp::OutputProtection protection;
    EchoCapture capture;
    double lastOutputGain = 1.0;
    int currentProgram = 0;
    juce::String stateProblem;

    JUCE_DECLARE_NON_COPYABLE_WITH_LEAK_DETECTOR(KerfProcessor)
};

} // namespace kerf
