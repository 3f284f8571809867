#pragma once
// The chain the glide-cost benchmarks move (kerf_smoothing_bench on the chain processor,
// kerf_plugin_bench through the plugin): synthetic settings, not from any product.
#include "Chain.h"

#include <cmath>

namespace kerf::bench
{
inline constexpr int kBenchSections = 24;

/// 24 peaking sections spread over the band; `phase` moves the frequency, gain and Q of the
/// first `moving` sections within glide range (0.4 octave, 4 dB, Q x1.3): even phases one
/// way, odd phases the other.
inline dsp::ChainSpec benchChain(dsp::DesignMode mode, int phase, int moving = kBenchSections)
{
    dsp::ChainSpec c;
    for (int i = 0; i < kBenchSections; ++i)
    {
        const double m = i >= moving ? 0.0 : phase % 2 ? 1.0 : -1.0;
        dsp::StageSpec s;
        s.type = dsp::StageType::peaking;
        s.freqHz = 40.0 * std::pow(400.0, i / double(kBenchSections - 1)) * std::pow(2.0, 0.2 * m);
        s.gainDb = (i % 2 ? -1.0 : 1.0) * (3.0 + i % 5) + 2.0 * m;
        s.q = (0.7 + 0.3 * (i % 4)) * std::pow(1.3, 0.5 * m);
        s.design = mode;
        c.push(s);
    }
    return c;
}
} // namespace kerf::bench
