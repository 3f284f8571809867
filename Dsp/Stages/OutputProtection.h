#pragma once
// The safety ceiling at the very end of the graph: the only non-linear step. It keeps a
// feedback stage or a large boost from sending a full-scale blast to monitors or ears.

#include <atomic>
#include <cmath>
#include <cstdint>

namespace kerf::dsp
{

/// Hard ceiling on sample magnitude, with non-finite samples replaced by silence.
/// Counts what it touched so that the display can show it acting.
class OutputProtection
{
public:
    /// ceilingDb: highest allowed peak in dBFS (e.g. -1).
    void setCeilingDb(double ceilingDb) noexcept { ceiling = std::pow(10.0, ceilingDb / 20.0); }

    /// Applies the ceiling in place; returns how many samples it changed.
    template <typename Sample>
    std::int64_t process(Sample* const* channels, int numChannels, int numSamples) noexcept
    {
        std::int64_t touched = 0;
        const auto c = static_cast<Sample>(ceiling);
        for (int ch = 0; ch < numChannels; ++ch)
        {
            Sample* x = channels[ch];
            for (int n = 0; n < numSamples; ++n)
            {
                const Sample v = x[n];
                if (!std::isfinite(v))
                {
                    x[n] = 0;
                    ++touched;
                }
                else if (v > c || v < -c)
                {
                    x[n] = v > 0 ? c : -c;
                    ++touched;
                }
            }
        }
        if (touched > 0)
            touchedTotal.fetch_add(touched, std::memory_order_relaxed);
        return touched;
    }

    /// Samples changed since the last call (for a "protection acted" indicator).
    std::int64_t takeTouchedCount() noexcept { return touchedTotal.exchange(0); }

private:
    double ceiling = 1.0;
    std::atomic<std::int64_t> touchedTotal{0};
};

} // namespace kerf::dsp
