#pragma once
// The live analyzer's plumbing: the processor's feed (an SPSC FIFO the audio thread fills
// while the analyzer is on) drained by a background thread into dsp::SpectrumAnalyzer, whose
// band levels reach the message thread through a lock-free triple buffer.
#include "Analysis/SpectrumAnalyzer.h"

#include <juce_core/juce_core.h>

#include <atomic>
#include <mutex>
#include <vector>

namespace kerf
{

class KerfProcessor;

/// Owned by the editor side; never touches the audio thread beyond the processor's flag.
class LiveAnalyzer : private juce::Thread
{
public:
    /// One published result: per band, the displayed level and held peak of both signals.
    struct Snapshot
    {
        std::vector<float> inputLevel, outputLevel, inputPeak, outputPeak;
        std::int64_t frames = 0;   ///< frames analysed so far
        std::uint64_t dropped = 0; ///< pairs the FIFO dropped (full) since the processor began
        int layout = 0;            ///< which setBandEdges call the bands follow
    };

    explicit LiveAnalyzer(KerfProcessor& processor);
    ~LiveAnalyzer() override;

    /// Switches the processor's feed on or off (message thread). With runThread the
    /// background thread drains the FIFO every 10 ms; without it the caller calls pump()
    /// (tests, the cost measurement). Turning on starts from a clean FIFO and clean levels.
    void setEnabled(bool on, bool runThread = true);
    bool isEnabled() const noexcept { return enabled; }

    /// New display bands (message thread); the analysis takes them at its next pump.
    /// Returns the layout number that snapshots following these bands will carry.
    int setBandEdges(std::vector<double> edgesHz);
    void setBallistics(const dsp::AnalyzerBallistics& b);

    /// Drains the FIFO through the analysis and publishes a snapshot when a frame completed.
    /// Called by the background thread, or directly when no thread runs.
    void pump();

    /// Message thread: takes the newest snapshot if one was published since the last call.
    bool update();
    /// Message thread: the snapshot update() last took.
    const Snapshot& current() const noexcept { return slots[front]; }

    /// The analysis itself (only while no thread runs: tests).
    const dsp::SpectrumAnalyzer& analysis() const noexcept { return engine; }

private:
    void run() override;
    void publish();

    KerfProcessor& processor;
    bool enabled = false;
    dsp::SpectrumAnalyzer engine;
    std::vector<float> scratchIn, scratchOut;
    std::int64_t publishedFrames = -1;

    std::mutex edgesLock; // message thread and analysis thread only (never the audio thread)
    std::vector<double> pendingEdges;
    dsp::AnalyzerBallistics pendingBallistics;
    int requestedLayout = 0, appliedLayout = 0;
    bool edgesPending = false, ballisticsPending = false;

    // Triple buffer: the analysis writes slots[back], then swaps it with the middle slot
    // (marking it fresh); the message thread swaps a fresh middle with slots[front].
    Snapshot slots[3];
    int front = 0, back = 1;
    std::atomic<int> middle{2};
    static constexpr int kFresh = 4;
};

} // namespace kerf
