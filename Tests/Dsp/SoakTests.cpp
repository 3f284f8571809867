// The soak run's short version (Soak.h; the hour-long run is kerf_soak, on demand): 60 s of
// 48 kHz stereo under random automation, checked for correctness only (no timing bars).
#include "Soak.h"

#include <catch2/catch.hpp>

TEST_CASE("soak: 60 s of random automation through 24 sections, two combs and an echo stage",
          "[robustness][soak]")
{
    // Common practice for audio callbacks: no sample that is not a number, no runaway, no
    // heap allocation while processing; the output protection holds its ceiling. Seed fixed
    // (Soak.h), so the run is the same every time.
    kerf::soak::Options o;
    o.seconds = 60.0;
    o.keepBlockTimes = false;
    const auto r = kerf::soak::run(o);
    INFO(r.blocks << " blocks, " << r.chainChanges << " chain changes (" << r.crossfadeChanges
                  << " crossfading), " << r.glideTimeChanges << " glide-time changes; peak before "
                  << "protection " << r.peakBeforeProtection << ", protection acted on "
                  << r.protectionActed << " samples");
    CHECK(r.samples == 60LL * 48000LL);
    CHECK(r.chainChanges > 1000);
    CHECK(r.crossfadeChanges > 100);
    CHECK(r.nonFiniteOut == 0);
    CHECK(r.nonFiniteEvents == 0u);
    CHECK(r.overCeiling == 0);
    CHECK(r.allocations == 0);
    // Sanity of the hook itself: an allocation inside a scope is counted.
    const long long before = kerf::allochook::count();
    {
        kerf::allochook::Scope counting;
        double* volatile p = new double[4]; // volatile: the pair is not elided
        delete[] p;
    }
    CHECK(kerf::allochook::count() == before + 2);
}
