#pragma once
// The plugin's "listen for room echo" action: a few seconds of input are recorded on the
// audio thread into a buffer sized in advance, estimated on a background thread, and the
// result is offered to the user, who applies or discards it.
#include "Analysis/EchoEstimator.h"

#include <juce_core/juce_core.h>

#include <atomic>
#include <mutex>
#include <vector>

namespace kerf
{

/// Records, estimates, proposes. Audio thread: push() only (no allocation, no lock).
/// Message thread: prepare(), start(), cancel(), takeProposal().
class EchoCapture : private juce::Thread
{
public:
    enum class State
    {
        idle,      ///< nothing under way
        recording, ///< the audio thread is filling the buffer
        analysing, ///< the background thread is estimating
        ready,     ///< a proposal waits for the user
    };

    /// Seconds of input recorded for one estimate.
    static constexpr double kCaptureSeconds = 6.0;

    EchoCapture();
    ~EchoCapture() override;

    /// Sizes the buffer for this sample rate (allocates; call from prepareToPlay).
    void prepare(double sampleRateHz);
    /// Begins recording (from idle or ready: a previous proposal is dropped).
    void start();
    /// Stops whatever is under way and drops any proposal.
    void cancel();
    State state() const noexcept { return static_cast<State>(stateValue.load()); }
    /// Fraction of the recording done, 0..1.
    float progress() const noexcept;

    /// Audio thread: appends the mono mix of the block while recording.
    template <typename Sample>
    void push(const Sample* const* channels, int numChannels, int numSamples) noexcept
    {
        if (stateValue.load(std::memory_order_acquire) != static_cast<int>(State::recording) ||
            numChannels <= 0)
            return;
        int pos = writePos.load(std::memory_order_relaxed);
        const int size = static_cast<int>(buffer.size());
        const double scale = 1.0 / numChannels;
        for (int i = 0; i < numSamples && pos < size; ++i, ++pos)
        {
            double sum = 0.0;
            for (int ch = 0; ch < numChannels; ++ch)
                sum += static_cast<double>(channels[ch][i]);
            buffer[static_cast<std::size_t>(pos)] = static_cast<float>(sum * scale);
        }
        writePos.store(pos, std::memory_order_release);
        if (pos >= size)
            stateValue.store(static_cast<int>(State::analysing), std::memory_order_release);
    }

    /// The estimate once state() is ready (empty otherwise); returns to idle.
    bool takeProposal(dsp::EchoEstimate& out);
    /// A look at the proposal without taking it (for display).
    bool peekProposal(dsp::EchoEstimate& out) const;

private:
    void run() override;

    std::vector<float> buffer;
    double rate = 48000.0;
    std::atomic<int> stateValue{static_cast<int>(State::idle)};
    std::atomic<int> writePos{0};
    std::atomic<int> generation{0};  // bumped by cancel(): a running estimate is dropped
    mutable std::mutex proposalLock; // background and message threads only
    dsp::EchoEstimate proposal;
};

} // namespace kerf
