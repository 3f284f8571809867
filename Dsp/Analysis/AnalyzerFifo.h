#pragma once
// A single-producer, single-consumer lock-free ring of sample pairs (the live analyzer's
// input and output mono sums). The audio thread pushes, one analysis thread pops; neither
// waits for the other: when the ring is full the producer drops what does not fit and
// counts it.
#include <algorithm>
#include <atomic>
#include <cstdint>
#include <vector>

namespace kerf::dsp
{

/// Fixed-capacity SPSC ring of (input, output) sample pairs. The capacity is set once in
/// the constructor (allocates); push and pop never allocate, lock or wait.
class AnalyzerFifo
{
    static_assert(std::atomic<std::uint64_t>::is_always_lock_free,
                  "the audio thread may only touch lock-free atomics");

public:
    /// capacityPairs is rounded up to a power of two.
    explicit AnalyzerFifo(int capacityPairs)
    {
        int c = 1;
        while (c < capacityPairs)
            c <<= 1;
        mask = static_cast<std::uint64_t>(c - 1);
        in.assign(static_cast<std::size_t>(c), 0.0f);
        out.assign(static_cast<std::size_t>(c), 0.0f);
    }

    int capacity() const noexcept { return static_cast<int>(mask + 1); }

    /// Producer (audio thread): appends up to n pairs; what does not fit is dropped and
    /// counted. Returns the number written.
    int push(const float* input, const float* output, int n) noexcept
    {
        const std::uint64_t w = writeIndex.load(std::memory_order_relaxed);
        const std::uint64_t r = readIndex.load(std::memory_order_acquire);
        const std::uint64_t space = mask + 1 - (w - r);
        const int count = static_cast<int>(
            std::min<std::uint64_t>(space, static_cast<std::uint64_t>(n > 0 ? n : 0)));
        for (int i = 0; i < count; ++i)
        {
            const auto at = static_cast<std::size_t>((w + static_cast<std::uint64_t>(i)) & mask);
            in[at] = input[i];
            out[at] = output[i];
        }
        writeIndex.store(w + static_cast<std::uint64_t>(count), std::memory_order_release);
        if (count < n)
            droppedPairs.fetch_add(static_cast<std::uint64_t>(n - count),
                                   std::memory_order_relaxed);
        return count;
    }

    /// Producer: counts n pairs as dropped without offering them.
    void countDropped(int n) noexcept
    {
        if (n > 0)
            droppedPairs.fetch_add(static_cast<std::uint64_t>(n), std::memory_order_relaxed);
    }

    /// Consumer: pairs ready to pop.
    int available() const noexcept
    {
        return static_cast<int>(writeIndex.load(std::memory_order_acquire) -
                                readIndex.load(std::memory_order_relaxed));
    }

    /// Consumer: takes up to maxPairs pairs. Returns the number taken.
    int pop(float* input, float* output, int maxPairs) noexcept
    {
        const std::uint64_t r = readIndex.load(std::memory_order_relaxed);
        const std::uint64_t w = writeIndex.load(std::memory_order_acquire);
        const int count = static_cast<int>(std::min<std::uint64_t>(
            w - r, static_cast<std::uint64_t>(maxPairs > 0 ? maxPairs : 0)));
        for (int i = 0; i < count; ++i)
        {
            const auto at = static_cast<std::size_t>((r + static_cast<std::uint64_t>(i)) & mask);
            input[i] = in[at];
            output[i] = out[at];
        }
        readIndex.store(r + static_cast<std::uint64_t>(count), std::memory_order_release);
        return count;
    }

    /// Consumer: forgets everything pushed so far (stale data after a pause or rate change).
    void discardAll() noexcept
    {
        readIndex.store(writeIndex.load(std::memory_order_acquire), std::memory_order_release);
    }

    /// Pairs dropped because the ring was full, since construction (any thread).
    std::uint64_t dropped() const noexcept { return droppedPairs.load(std::memory_order_relaxed); }
    /// Pairs ever pushed (any thread; tests).
    std::uint64_t pushed() const noexcept { return writeIndex.load(std::memory_order_acquire); }

private:
    std::vector<float> in, out;
    std::uint64_t mask = 0;
    alignas(64) std::atomic<std::uint64_t> writeIndex{0};
    alignas(64) std::atomic<std::uint64_t> readIndex{0};
    alignas(64) std::atomic<std::uint64_t> droppedPairs{0};
};

} // namespace kerf::dsp
