#include "LiveAnalyzer.h"

#include "PluginProcessor.h"

namespace kerf
{

namespace
{
constexpr int kChunk = 4096; // pairs popped at a time
constexpr int kPollMs = 10;  // the thread's pause between pumps
} // namespace

LiveAnalyzer::LiveAnalyzer(KerfProcessor& p)
    : juce::Thread("Kerf analyzer"), processor(p), scratchIn(static_cast<std::size_t>(kChunk)),
      scratchOut(static_cast<std::size_t>(kChunk))
{
}

LiveAnalyzer::~LiveAnalyzer()
{
    setEnabled(false);
}

void LiveAnalyzer::setEnabled(bool on, bool runThread)
{
    if (!on)
    {
        processor.setAnalyzerFeed(false);
        stopThread(1000);
        enabled = false;
        return;
    }
    if (enabled)
        return;
    stopThread(1000);
    // Start clean: what the FIFO held from an earlier run is stale, and the levels with it.
    processor.analyzerFifo().discardAll();
    engine.prepare(processor.analyzerSampleRate() > 0.0 ? processor.analyzerSampleRate() : 48000.0);
    publishedFrames = -1;
    enabled = true;
    processor.setAnalyzerFeed(true);
    if (runThread)
        startThread(juce::Thread::Priority::low);
}

int LiveAnalyzer::setBandEdges(std::vector<double> edgesHz)
{
    const std::lock_guard<std::mutex> lock(edgesLock);
    pendingEdges = std::move(edgesHz);
    edgesPending = true;
    return ++requestedLayout;
}

void LiveAnalyzer::setBallistics(const dsp::AnalyzerBallistics& b)
{
    const std::lock_guard<std::mutex> lock(edgesLock);
    pendingBallistics = b;
    ballisticsPending = true;
}

void LiveAnalyzer::pump()
{
    auto& fifo = processor.analyzerFifo();
    const double rate = processor.analyzerSampleRate();
    if (rate > 0.0 && rate != engine.sampleRate())
    {
        fifo.discardAll(); // mixed rates would mean nothing
        engine.prepare(rate);
        publishedFrames = -1;
    }
    {
        const std::lock_guard<std::mutex> lock(edgesLock);
        if (edgesPending)
        {
            engine.setBandEdges(pendingEdges);
            appliedLayout = requestedLayout;
            edgesPending = false;
            publishedFrames = -1;
        }
        if (ballisticsPending)
        {
            engine.setBallistics(pendingBallistics);
            ballisticsPending = false;
        }
    }
    for (;;)
    {
        const int n = fifo.pop(scratchIn.data(), scratchOut.data(), kChunk);
        if (n == 0)
            break;
        engine.push(scratchIn.data(), scratchOut.data(), n);
    }
    if (engine.frames() != publishedFrames)
        publish();
}

void LiveAnalyzer::publish()
{
    using S = dsp::SpectrumAnalyzer;
    Snapshot& s = slots[back];
    s.inputLevel = engine.bandLevelDb(S::input);
    s.outputLevel = engine.bandLevelDb(S::output);
    s.inputPeak = engine.bandPeakDb(S::input);
    s.outputPeak = engine.bandPeakDb(S::output);
    s.frames = engine.frames();
    s.dropped = processor.analyzerFifo().dropped();
    s.layout = appliedLayout;
    publishedFrames = engine.frames();
    back = middle.exchange(back | kFresh, std::memory_order_acq_rel) & 3;
}

bool LiveAnalyzer::update()
{
    if ((middle.load(std::memory_order_acquire) & kFresh) == 0)
        return false;
    front = middle.exchange(front, std::memory_order_acq_rel) & 3;
    return true;
}

void LiveAnalyzer::run()
{
    while (!threadShouldExit())
    {
        pump();
        wait(kPollMs);
    }
}

} // namespace kerf
