#include "AudioInput.h"

#include "XmlHazards.h"

#include <algorithm>
#include <cstring>
#include <string>

namespace kerf::cli
{

namespace
{
bool is(const unsigned char* p, const char* id)
{
    return std::memcmp(p, id, 4) == 0;
}

juce::String printableId(const unsigned char* id)
{
    std::string s;
    for (int i = 0; i < 4; ++i)
        s += id[i] >= 32 && id[i] < 127 ? static_cast<char>(id[i]) : '?';
    return s;
}

/// An AIFF 'MARK' or 'COMT' chunk of `size` bytes (the stream just past its header) whose
/// count of markers or comments it has no room for. JUCE 7.0.5's AIFF reader reads as many
/// as the 16-bit count says, on past the chunk and the file's end, making strings for each
/// (a 262-byte AIFF of twenty 'COMT' chunks that each count 65535 comments in 2 bytes took
/// 11.5 s; found by fuzzing). Every marker takes at least 8 bytes (id 2, position 4, a name
/// of at least its count byte and a pad byte) and so does every comment (time stamp 4,
/// marker 2, count 2, then its text): Audio Interchange File Format 1.3, Apple Computer
/// 1989, "Marker Chunk" and "Comments Chunk" (from memory).
juce::String overcountedAiffChunk(juce::InputStream& in, const unsigned char* id, juce::uint32 size)
{
    const bool markers = is(id, "MARK");
    unsigned char c[2] = {};
    if (!(markers || is(id, "COMT")) || in.read(c, 2) != 2)
        return {}; // (JUCE reads the count even where the chunk is too short to hold it)
    const juce::uint32 count = juce::ByteOrder::bigEndianShort(c);
    const juce::uint32 room = size >= 2 ? (size - 2) / 8 : 0;
    if (count <= room)
        return {};
    return "its '" + printableId(id) + "' chunk lists " + juce::String(count) +
           (markers ? " markers" : " comments") + " where it has room for " + juce::String(room);
}

/// A WAV 'iXML' or 'axml' chunk of `size` bytes (the stream just past its header) holding
/// XML that JUCE's reader, which parses them, cannot safely read: one nested 40000 deep
/// crashed `kerf render` (the reader recurses per level), one holding a processing
/// instruction inside an element followed by text hung it (XmlHazards.h).
juce::String unsafeXmlChunk(juce::InputStream& in, const unsigned char* id, juce::uint32 size)
{
    juce::MemoryBlock xml;
    if (!(is(id, "iXML") || is(id, "axml")) ||
        in.readIntoMemoryBlock(xml, static_cast<ssize_t>(size)) != size)
        return {};
    if (const char* hazard = xmlHazard(static_cast<const char*>(xml.getData()), xml.getSize()))
        return "its '" + printableId(id) + "' chunk holds XML with " + juce::String(hazard);
    return {};
}

/// A WAV cue list (a 'LIST' chunk of type 'adtl' at `pos`, `size` bytes, in a file of
/// `total`) that JUCE's reader cannot walk safely. It walks the entries up to the chunk's
/// end plus its pad byte: where that lies past the file's end, the walk stalls at the end
/// of the file for good (a 289-byte WAV hung `kerf render`), and an entry shorter than its
/// fixed fields ('labl' and 'note' 4 bytes, 'ltxt' 20: Multimedia Programming Interface and
/// Data Specifications 1.0, IBM and Microsoft 1991, "Associated Data List"; from memory)
/// makes it read the whole rest of the file for that entry (5000 such entries before 2 MB
/// of audio took 3.4 s). The entries are walked here as JUCE walks them.
juce::String unsafeCueList(juce::InputStream& in, juce::int64 pos, juce::uint32 size,
                           juce::int64 total)
{
    unsigned char type[4] = {};
    if (size < 4 || !in.setPosition(pos + 8) || in.read(type, 4) != 4 || !is(type, "adtl"))
        return {};
    const juce::int64 listEnd = pos + 8 + static_cast<juce::int64>(size) + (size & 1u);
    for (juce::int64 at = pos + 12; at < listEnd;)
    {
        unsigned char e[8] = {};
        if (at >= total)
            return "its 'LIST' chunk runs past the end of the file";
        if (at + 8 > total || !in.setPosition(at) || in.read(e, 8) != 8)
        {
            at = total; // a cut entry header: JUCE's reads stop at the end
            continue;
        }
        const juce::uint32 length = juce::ByteOrder::littleEndianInt(e + 4);
        const bool region = is(e, "ltxt");
        const juce::uint32 least = region ? 20u : is(e, "labl") || is(e, "note") ? 4u : 0u;
        if (length < least)
            return "its 'LIST' chunk holds " + juce::String(region ? "an" : "a") + " '" +
                   printableId(e) + "' entry of " + juce::String(length) +
                   " bytes, shorter than its " + juce::String(least) + "-byte header";
        at += 8 + static_cast<juce::int64>(length) + (length & 1u);
    }
    return {};
}

/// WAV (RIFF or RF64, little-endian sizes) and AIFF (FORM, big-endian) files are chunks of a
/// four-byte id, a 32-bit size and a body padded to an even length. A chunk other than the
/// audio data that claims more bytes than the file has left is damaged, and JUCE 7.0.5's WAV
/// reader trusts such claims: it allocates what an 'smpl', 'bext' or 'inst' chunk claims and
/// walks the sample loops an 'smpl' chunk claims (a 1.6 kB file whose 'smpl' chunk claimed
/// 544 MB kept `kerf render` busy for minutes: found by fuzzing,
/// Tests/fuzz/regressions/audio_input). The chunks JUCE's readers read unsafely even within
/// the file are checked too (the helpers above). Returns what is wrong, or nothing. The
/// audio data chunk may run past the end (a cut file: read up to there, then reported) and
/// ends the walk.
juce::String damagedChunk(juce::InputStream& in)
{
    const juce::int64 total = in.getTotalLength();
    unsigned char head[12] = {};
    juce::String problem;
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
        for (juce::int64 pos = 12; (wav || aiff) && pos + 8 <= end && problem.isEmpty();)
        {
            unsigned char h[8] = {};
            if (!in.setPosition(pos) || in.read(h, 8) != 8)
                break;
            const juce::uint32 size = wav ? juce::ByteOrder::littleEndianInt(h + 4)
                                          : juce::ByteOrder::bigEndianInt(h + 4);
            const juce::int64 left = total - pos - 8;
            if (static_cast<juce::int64>(size) > left)
            {
                if (!(wav ? is(h, "data") : is(h, "SSND")))
                    problem = "its '" + printableId(h) + "' chunk claims " +
                              juce::String(static_cast<juce::int64>(size)) +
                              " bytes where the file has " + juce::String(left) + " left";
                break;
            }
            if (aiff)
                problem = overcountedAiffChunk(in, h, size);
            else if (is(h, "LIST"))
                problem = unsafeCueList(in, pos, size, total);
            else
                problem = unsafeXmlChunk(in, h, size);
            pos += 8 + static_cast<juce::int64>(size) + (size & 1u);
        }
    }
    in.setPosition(0);
    return problem;
}
} // namespace

/// Wraps a file stream and remembers whether a read came up short.
class AudioInput::ShortReadDetector : public juce::InputStream
{
public:
    explicit ShortReadDetector(std::unique_ptr<juce::InputStream> s) : inner(std::move(s)) {}
    juce::int64 getTotalLength() override { return inner->getTotalLength(); }
    bool isExhausted() override { return inner->isExhausted(); }
    int read(void* dest, int n) override
    {
        const int got = inner->read(dest, n);
        if (armed && got < n)
            shortRead = true;
        return got;
    }
    juce::int64 getPosition() override { return inner->getPosition(); }
    bool setPosition(juce::int64 p) override { return inner->setPosition(p); }

    bool armed = false;
    bool shortRead = false;

private:
    std::unique_ptr<juce::InputStream> inner;
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
    if (const auto problem = damagedChunk(*stream); problem.isNotEmpty())
    {
        error = "input " + name + " is not a readable WAV, AIFF or FLAC file (damaged: " + problem +
                ")";
        return nullptr;
    }
    auto input = std::unique_ptr<AudioInput>(new AudioInput());
    input->detector_ = new ShortReadDetector(std::move(stream));
    input->reader_.reset(
        formats.createReaderFor(std::unique_ptr<juce::InputStream>(input->detector_)));
    if (input->reader_ == nullptr)
    {
        error =
            "input " + name + " is not a readable WAV, AIFF or FLAC file (unsupported or damaged)";
        return nullptr;
    }
    // Uncompressed formats read exactly what the header promises; a short read means the
    // file was cut. (Compressed decoders legitimately read past the end in chunks.)
    const juce::String formatName = input->reader_->getFormatName();
    input->detector_->armed =
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
    if (input->detector_->armed && bits != 8 && bits != 16 && bits != 24 && bits != 32)
    {
        error = "input " + name + " is not a readable WAV, AIFF or FLAC file (" +
                juce::String(bits) + "-bit samples)";
        return nullptr;
    }
    // A FLAC frame takes at least 8 bytes (a frame header of at least 6 with its CRC-8, a
    // subframe header, the CRC-16 footer: FLAC format, IETF RFC 9639, section 9; from
    // memory) and holds at most 65535 samples per channel, so a header that claims more than
    // the file's size allows is damaged; JUCE's reader would decode silence for all of it.
    const juce::int64 bytes = input->detector_->getTotalLength();
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
    return detector_->shortRead;
}

bool AudioInput::read(juce::AudioBuffer<float>& buffer, int n, juce::int64 start)
{
    return reader_->read(&buffer, 0, n, start, true, true) && !truncated();
}

} // namespace kerf::cli
