// The hour-long soak (on demand, not a unit test): kerf_soak [seconds] [block] [seed].
// One hour of 48 kHz stereo (synthetic noise and tones, fixed seed) in host-like blocks
// through 24 sections, a feedforward and a feedback comb and an echo canceller under random
// automation (Tests/Dsp/Soak.h). Exits non-zero on a sample that is not finite, a runaway
// (the processor's non-finite events), an output beyond the protection's ceiling, or any
// heap allocation while processing. Prints the per-block processing time (a report, not a
// bar): median, p99, p99.9, max, max/median, and each minute's median to show drift.
#include "Soak.h"

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <vector>

namespace
{
double quantile(std::vector<double> v, double q)
{
    if (v.empty())
        return 0.0;
    const auto k = static_cast<std::size_t>(q * static_cast<double>(v.size() - 1));
    std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(k), v.end());
    return v[k];
}
} // namespace

int main(int argc, char** argv)
{
    kerf::soak::Options o;
    o.seconds = argc > 1 ? std::atof(argv[1]) : 3600.0;
    if (argc > 2)
        o.blockSize = std::max(1, std::atoi(argv[2]));
    if (argc > 3)
        o.seed = static_cast<unsigned>(std::strtoul(argv[3], nullptr, 10));
    std::printf("kerf_soak: %.0f s of %.0f Hz stereo, blocks of %d, seed %u\n", o.seconds,
                o.sampleRateHz, o.blockSize, o.seed);
    const auto r = kerf::soak::run(o);

    const double blockAudio = o.blockSize / o.sampleRateHz;
    const double med = quantile(r.blockSeconds, 0.5);
    const double mx = *std::max_element(r.blockSeconds.begin(), r.blockSeconds.end());
    double total = 0.0;
    for (double t : r.blockSeconds)
        total += t;
    std::printf("blocks %lld, samples %lld, chain changes %lld (%lld crossfading), glide-time "
                "changes %lld\n",
                r.blocks, r.samples, r.chainChanges, r.crossfadeChanges, r.glideTimeChanges);
    std::printf("processing %.1f s for %.1f s of audio (%.1fx real time)\n", total,
                r.samples / o.sampleRateHz, r.samples / o.sampleRateHz / total);
    std::printf("per block (us): median %.2f  p99 %.2f  p99.9 %.2f  max %.2f  max/median %.1f"
                "  (block = %.0f us of audio)\n",
                1e6 * med, 1e6 * quantile(r.blockSeconds, 0.99),
                1e6 * quantile(r.blockSeconds, 0.999), 1e6 * mx, mx / med, 1e6 * blockAudio);
    const auto perMinute = static_cast<std::size_t>(60.0 / blockAudio);
    std::printf("per-minute medians (us):");
    for (std::size_t s = 0; s < r.blockSeconds.size(); s += perMinute)
    {
        const auto e = std::min(r.blockSeconds.size(), s + perMinute);
        std::vector<double> m(r.blockSeconds.begin() + static_cast<std::ptrdiff_t>(s),
                              r.blockSeconds.begin() + static_cast<std::ptrdiff_t>(e));
        std::printf(" %.1f", 1e6 * quantile(m, 0.5));
    }
    std::printf("\npeak before protection %.3g (%.1f dBFS), protection acted on %lld samples\n",
                r.peakBeforeProtection, 20.0 * std::log10(std::max(r.peakBeforeProtection, 1e-30)),
                r.protectionActed);
    std::printf("non-finite output samples %lld, runaway/non-finite events %u, beyond ceiling "
                "%lld, allocations while processing %lld\n",
                r.nonFiniteOut, r.nonFiniteEvents, r.overCeiling, r.allocations);
    const bool ok =
        r.nonFiniteOut == 0 && r.nonFiniteEvents == 0 && r.overCeiling == 0 && r.allocations == 0;
    std::printf("%s\n", ok ? "PASS" : "FAIL");
    return ok ? 0 : 1;
}
