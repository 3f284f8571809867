// libFuzzer target: plugin state restore (KerfProcessor::setStateInformation). One
// processor serves every input, as a host reuses an instance when it loads sessions;
// each restore resets what the previous one set. Promises: FuzzChecks.h.
#include "FuzzChecks.h"

#include <cstdio>
#include <cstdlib>

namespace
{
/// Drops the processor's "state refused" log lines (one per corrupt input).
struct QuietLogger : juce::Logger
{
    void logMessage(const juce::String&) override {}
};

kerf::KerfProcessor& processor()
{
    // Never destroyed: at exit, JUCE's list of DeletedAtShutdown objects (a function-local
    // static made after these) is gone before a static initialiser's destructor would use
    // it (a double free ASan reported in the first run). The OS reclaims the memory.
    static auto* juceInit = new juce::ScopedJuceInitialiser_GUI;
    static auto* logger = new QuietLogger;
    static auto* p = new kerf::KerfProcessor;
    juce::ignoreUnused(juceInit);
    juce::Logger::setCurrentLogger(logger);
    return *p;
}
} // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size)
{
    const auto outcome = kerf::fuzz::checkPluginState(processor(), data, size);
    if (outcome.violation.isNotEmpty())
    {
        std::fprintf(stderr, "kerf_fuzz_plugin_state: %s\n", outcome.violation.toRawUTF8());
        std::abort();
    }
    return 0;
}
