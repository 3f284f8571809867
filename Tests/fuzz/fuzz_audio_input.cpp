// libFuzzer target: the command line's audio input (kerf::cli::AudioInput over WAV, AIFF,
// FLAC and Ogg Vorbis through JUCE and Debian's codec libraries). Promises: FuzzChecks.h.
#include "FuzzChecks.h"

#include <cstdio>
#include <cstdlib>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size)
{
    const auto outcome = kerf::fuzz::checkAudioInput(data, size);
    if (outcome.violation.isNotEmpty())
    {
        std::fprintf(stderr, "kerf_fuzz_audio_input: %s\n", outcome.violation.toRawUTF8());
        std::abort();
    }
    return 0;
}
