#include "EchoCapture.h"

namespace kerf
{

EchoCapture::EchoCapture() : juce::Thread("Kerf echo estimate")
{
    startThread();
}

EchoCapture::~EchoCapture()
{
    stopThread(4000);
}

void EchoCapture::prepare(double sampleRateHz)
{
    cancel();
    // The buffer is about to move: let an estimate that is reading it finish first.
    for (int waited = 0; state() == State::analysing && waited < 20000; waited += 5)
        juce::Thread::sleep(5);
    rate = sampleRateHz;
    buffer.assign(static_cast<std::size_t>(kCaptureSeconds * sampleRateHz), 0.0f);
}

void EchoCapture::start()
{
    cancel();
    if (buffer.empty() || state() == State::analysing)
        return;
    writePos.store(0);
    stateValue.store(static_cast<int>(State::recording));
}

void EchoCapture::cancel()
{
    // An estimate already running finishes, but its result is dropped (see run()).
    generation.fetch_add(1);
    int expected = static_cast<int>(State::recording);
    stateValue.compare_exchange_strong(expected, static_cast<int>(State::idle));
    expected = static_cast<int>(State::ready);
    stateValue.compare_exchange_strong(expected, static_cast<int>(State::idle));
    std::lock_guard<std::mutex> guard(proposalLock);
    proposal = {};
}

float EchoCapture::progress() const noexcept
{
    if (buffer.empty())
        return 0.0f;
    return static_cast<float>(writePos.load()) / static_cast<float>(buffer.size());
}

void EchoCapture::run()
{
    while (!threadShouldExit())
    {
        if (stateValue.load(std::memory_order_acquire) != static_cast<int>(State::analysing))
        {
            wait(50);
            continue;
        }
        const int job = generation.load();
        dsp::EchoEstimatorOptions options;
        auto estimate = dsp::estimateEchoes(buffer.data(), buffer.size(), rate, options);
        std::lock_guard<std::mutex> guard(proposalLock);
        // Cancelled while estimating: drop the result and go back to idle.
        const bool current = job == generation.load();
        if (current)
            proposal = std::move(estimate);
        stateValue.store(static_cast<int>(current ? State::ready : State::idle));
    }
}

bool EchoCapture::takeProposal(dsp::EchoEstimate& out)
{
    if (state() != State::ready)
        return false;
    std::lock_guard<std::mutex> guard(proposalLock);
    out = proposal;
    proposal = {};
    stateValue.store(static_cast<int>(State::idle));
    return true;
}

bool EchoCapture::peekProposal(dsp::EchoEstimate& out) const
{
    if (state() != State::ready)
        return false;
    std::lock_guard<std::mutex> guard(proposalLock);
    out = proposal;
    return true;
}

} // namespace kerf
