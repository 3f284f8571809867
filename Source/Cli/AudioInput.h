#pragma once
// Opening audio files for the command line: WAV, AIFF and FLAC, with truncation detected.
#include <juce_audio_formats/juce_audio_formats.h>

#include <memory>

namespace kerf::cli
{

/// An opened input file. `truncated()` turns true when a read came up short: a WAV or AIFF
/// whose header promises more audio than the file holds.
class AudioInput
{
public:
    /// Most channels an input may have. WAV headers allow 65535; the command line reads
    /// blocks of 65536 frames per channel, so a 100-byte file claiming 16385 channels made
    /// it allocate 4 GB (found by fuzzing: Tests/fuzz/regressions/audio_input).
    static constexpr int kMaxChannels = 64;

    /// Opens `file`; on failure returns nullptr and sets `error` to a message for the user.
    static std::unique_ptr<AudioInput> open(const juce::File& file, juce::String& error);

    /// Opens audio from `stream` (what `open(file)` does after opening the file); `name`
    /// names the input in error messages.
    static std::unique_ptr<AudioInput> open(std::unique_ptr<juce::InputStream> stream,
                                            const juce::String& name, juce::String& error);

    juce::AudioFormatReader& reader() noexcept { return *reader_; }
    bool truncated() const noexcept;

    /// Reads n samples from `start` into buffer (all channels); false when the file is
    /// damaged or truncated there.
    bool read(juce::AudioBuffer<float>& buffer, int n, juce::int64 start);

private:
    class GuardedStream;
    std::unique_ptr<juce::AudioFormatReader> reader_;
    GuardedStream* stream_ = nullptr; // owned by reader_
};

} // namespace kerf::cli
