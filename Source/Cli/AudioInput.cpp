#include "AudioInput.h"

#include <algorithm>
#include <cstring>
#include <string>
#include <vector>

namespace kerf::cli
{

namespace
{
bool is(const unsigned char* p, const char* id)
{
    return std::memcmp(p, id, 4) == 0;
}

/// The chunks of a WAV (RIFF or RF64) or AIFF file, walked as JUCE 7.0.5's readers walk them:
/// what is damaged, and where the ids of the chunks to hide from JUCE lie.
struct ChunkWalk
{
    juce::String problem;              // empty when the walk found nothing wrong
    std::vector<juce::int64> metadata; // offsets of metadata chunks' ids, ascending
};

/// WAV (RIFF or RF64, little-endian sizes) and AIFF (FORM, big-endian) files are chunks of a
/// four-byte id, a 32-bit size and a body padded to an even length. A chunk other than the
/// audio data that claims more bytes than the file has left is damaged (the file was cut or
/// overwritten there) and refused with a message saying so. (Before metadata was hidden
/// from it, below, JUCE 7.0.5's WAV reader trusted such claims: a 1.6 kB file whose 'smpl'
/// chunk claimed 544 MB kept `kerf render` busy for minutes; found by fuzzing,
/// Tests/fuzz/regressions/audio_input.) The audio data chunk may run past the end (a cut
/// file: read up to there, then reported) and ends the walk.
///
/// Every chunk but those that describe and hold the audio (WAV 'fmt ', 'data', 'ds64';
/// AIFF 'COMM', 'SSND', 'FVER') is metadata, which Kerf does not use and JUCE's readers
/// parse without care: AIFF marker and comment counts read on past their chunk and the
/// file (twenty 'COMT' chunks counting 65535 comments each in 262 bytes took 11.5 s), a WAV
/// cue list ('LIST' of type 'adtl') whose pad byte the file lacks stalled the reader for
/// good and one with short entries read the rest of the file for each, 'iXML' and 'axml'
/// chunks go to an XML reader that recurses per level of nesting (40000 levels crashed) and
/// loops for good on some texts, and an AIFF 'cate' chunk shorter than its tags was read
/// past its buffer (AddressSanitizer; found by fuzzing with a dictionary of chunk ids). So
/// their ids are hidden from JUCE (read as 'JUNK', a chunk both readers skip) rather than
/// judged one by one, and the audio of a file with odd metadata still opens.
ChunkWalk walkChunks(juce::InputStream& in)
{
    ChunkWalk walk;
    const juce::int64 total = in.getTotalLength();
    unsigned char head[12] = {};
    if (total >= 12 && in.setPosition(0) && in.read(head, 12) == 12)
    {
        const bool wav = (is(head, "RIFF") || is(head, "RF64")) && is(head + 8, "WAVE");
        const bool aiff = is(head, "FORM") && (is(head + 8, "AIFF") || is(head + 8, "AIFC"));
        // Chunks past the end the header declares are not read (by JUCE either).
        const juce::uint32 declared = wav ? juce::ByteOrder::littleEndianInt(head + 4)
                                          : juce::ByteOrder::bigEndianInt(head + 4);
        const juce::int64 end = declared == 0 || declared == 0xffffffffu
                                    ? total
                                    : std::min(total, 8 + static_cast<juce::int64>(declared));
        // JUCE reads a chunk whose header starts before that end, even where the header
        // runs past it (a fuzzed AIFF's FORM ended inside the header of a 'cate' chunk).
        for (juce::int64 pos = 12; (wav || aiff) && pos < end;)
        {
            unsigned char h[8] = {};
            const int got = in.setPosition(pos) ? in.read(h, 8) : 0;
            if (got < 4)
                break; // no whole id: JUCE reads none
            const bool audio = wav ? is(h, "fmt ") || is(h, "data") || is(h, "ds64")
                                   : is(h, "COMM") || is(h, "SSND") || is(h, "FVER");
            if (!audio)
                walk.metadata.push_back(pos);
            if (got < 8)
                break; // no size: the file ends here
            const juce::uint32 size = wav ? juce::ByteOrder::littleEndianInt(h + 4)
                                          : juce::ByteOrder::bigEndianInt(h + 4);
            const juce::int64 left = total - pos - 8;
            if (static_cast<juce::int64>(size) > left)
            {
                if (!(wav ? is(h, "data") : is(h, "SSND")))
                {
                    std::string id;
                    for (int i = 0; i < 4; ++i)
                        id += h[i] >= 32 && h[i] < 127 ? static_cast<char>(h[i]) : '?';
                    walk.problem = "its '" + juce::String(id) + "' chunk claims " +
                                   juce::String(static_cast<juce::int64>(size)) +
                                   " bytes where the file has " + juce::String(left) + " left";
                }
                break;
            }
            pos += 8 + static_cast<juce::int64>(size) + (size & 1u);
        }
    }
    in.setPosition(0);
    return walk;
}
} // namespace

/// Wraps a file stream: remembers whether a read came up short, and shows the ids of the
/// metadata chunks listed in `hidden` as 'JUNK' (walkChunks).
class AudioInput::GuardedStream : public juce::InputStream
{
public:
    GuardedStream(std::unique_ptr<juce::InputStream> s, std::vector<juce::int64> hiddenIds)
        : inner(std::move(s)), hidden(std::move(hiddenIds))
    {
    }
    juce::int64 getTotalLength() override { return inner->getTotalLength(); }
    bool isExhausted() override { return inner->isExhausted(); }
    int read(void* dest, int n) override
    {
        const juce::int64 from = inner->getPosition();
        const int got = inner->read(dest, n);
        if (armed && got < n)
            shortRead = true;
        // Ids that overlap [from, from + got).
        auto* bytes = static_cast<char*>(dest);
        for (auto it = std::lower_bound(hidden.begin(), hidden.end(), from - 3);
             it != hidden.end() && *it < from + got; ++it)
            for (juce::int64 k = std::max<juce::int64>(*it, from);
                 k < std::min<juce::int64>(*it + 4, from + got); ++k)
                bytes[k - from] = "JUNK"[k - *it];
        return got;
    }
    juce::int64 getPosition() override { return inner->getPosition(); }
    bool setPosition(juce::int64 p) override { return inner->setPosition(p); }

    bool armed = false;
    bool shortRead = false;

private:
    std::unique_ptr<juce::InputStream> inner;
    std::vector<juce::int64> hidden;
};

std::unique_ptr<AudioInput> AudioInput::open(const juce::File& file, juce::String& error)
{
    if (file.isDirectory())
    {
        error = "input " + file.getFullPathName() + " is a directory, not an audio file";
        return nullptr;
    }
    if (!file.existsAsFile())
    {
        error = "input " + file.getFullPathName() + " does not exist";
        return nullptr;
    }
    auto stream = std::make_unique<juce::FileInputStream>(file);
    if (!stream->openedOk())
    {
        error = "cannot open input " + file.getFullPathName() + ": " +
                stream->getStatus().getErrorMessage();
        return nullptr;
    }
    return open(std::move(stream), file.getFullPathName(), error);
}

std::unique_ptr<AudioInput> AudioInput::open(std::unique_ptr<juce::InputStream> stream,
                                             const juce::String& name, juce::String& error)
{
    juce::AudioFormatManager formats;
    formats.registerBasicFormats();
    auto walk = walkChunks(*stream);
    if (walk.problem.isNotEmpty())
    {
        error = "input " + name +
                " is not a readable WAV, AIFF or FLAC file (damaged: " + walk.problem + ")";
        return nullptr;
    }
    auto input = std::unique_ptr<AudioInput>(new AudioInput());
    input->stream_ = new GuardedStream(std::move(stream), std::move(walk.metadata));
    input->reader_.reset(
        formats.createReaderFor(std::unique_ptr<juce::InputStream>(input->stream_)));
    if (input->reader_ == nullptr)
    {
        error =
            "input " + name + " is not a readable WAV, AIFF or FLAC file (unsupported or damaged)";
        return nullptr;
    }
    // Uncompressed formats read exactly what the header promises; a short read means the
    // file was cut. (Compressed decoders legitimately read past the end in chunks.)
    const juce::String formatName = input->reader_->getFormatName();
    input->stream_->armed =
        formatName.containsIgnoreCase("WAV") || formatName.containsIgnoreCase("AIFF");
    const auto& r = *input->reader_;
    if (r.sampleRate <= 0 || r.numChannels == 0 || r.lengthInSamples < 0)
    {
        error = "input " + name + " has no usable audio (rate " + juce::String(r.sampleRate) +
                ", channels " + juce::String(r.numChannels) + ")";
        return nullptr;
    }
    // JUCE 7.0.5's WAV and AIFF readers copy 8, 16, 24 or 32-bit samples, through a
    // 5760-byte buffer that must hold one frame: a 41-byte AIFF claiming 11800-bit samples
    // made readSamples loop forever (found by fuzzing: Tests/fuzz/regressions/audio_input).
    const auto bits = r.bitsPerSample;
    if (input->stream_->armed && bits != 8 && bits != 16 && bits != 24 && bits != 32)
    {
        error = "input " + name + " is not a readable WAV, AIFF or FLAC file (" +
                juce::String(bits) + "-bit samples)";
        return nullptr;
    }
    // A FLAC frame takes at least 8 bytes (a frame header of at least 6 with its CRC-8, a
    // subframe header, the CRC-16 footer: FLAC format, IETF RFC 9639, section 9; from
    // memory) and holds at most 65535 samples per channel, so a header that claims more than
    // the file's size allows is damaged; JUCE's reader would decode silence for all of it.
    const juce::int64 bytes = input->stream_->getTotalLength();
    if (formatName.containsIgnoreCase("FLAC") && bytes > 0 &&
        r.lengthInSamples > (bytes / 8 + 1) * 65535)
    {
        error = "input " + name + " is damaged: its header claims " +
                juce::String(r.lengthInSamples) + " samples, more than " + juce::String(bytes) +
                " bytes of FLAC can hold";
        return nullptr;
    }
    if (r.numChannels > static_cast<unsigned int>(kMaxChannels))
    {
        error = "input " + name + " has " + juce::String(r.numChannels) +
                " channels; kerf reads at most " + juce::String(kMaxChannels);
        return nullptr;
    }
    return input;
}

bool AudioInput::truncated() const noexcept
{
    return stream_->shortRead;
}

bool AudioInput::read(juce::AudioBuffer<float>& buffer, int n, juce::int64 start)
{
    return reader_->read(&buffer, 0, n, start, true, true) && !truncated();
}

} // namespace kerf::cli
