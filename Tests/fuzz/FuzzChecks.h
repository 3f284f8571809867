#pragma once
// The three fuzzed entry points and the promises each makes about any input. The libFuzzer
// targets (fuzz_*.cpp, clang build) abort when a promise breaks; the replay test
// (Tests/Source/FuzzReplayTests.cpp, normal build) feeds every kept input through the same
// functions, so a regression is caught without clang.
#include "PluginProcessor.h"

#include <juce_core/juce_core.h>

#include <cstddef>

namespace kerf::fuzz
{

/// What one input did.
struct Outcome
{
    bool accepted = false;  ///< parsed / opened / restored without a problem
    juce::String message;   ///< the error or state problem reported for a refused input
    juce::String violation; ///< empty unless a documented promise was broken
};

/// Chain-file text as the command line reads it: either a chain whose every field lies in
/// the documented ranges, designs finite sections and survives a write/read round trip
/// unchanged, or an error message.
Outcome checkChainFile(const void* data, std::size_t size);

/// Plugin state restore: every parameter finite and within its range afterwards; a refused
/// state leaves every parameter at its default and names the problem; the restored state
/// saves and restores again unchanged; the exported chain is finite.
Outcome checkPluginState(KerfProcessor& processor, const void* data, std::size_t size);

/// The command line's audio input: either an error message, or a reader with a finite
/// positive sample rate and 1 to `cli::AudioInput::kMaxChannels` channels whose blocks
/// (the command line's block size, the first `kMaxFuzzFrames` frames) read without a crash.
Outcome checkAudioInput(const void* data, std::size_t size);

/// Frames read per audio input (keeps one input quick; the reading code is the same).
inline constexpr int kMaxFuzzFrames = 1 << 17;

} // namespace kerf::fuzz
