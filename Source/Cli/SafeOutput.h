#pragma once
// Output files of the command line: never over a file the command reads, written
// atomically (a temporary file in the target's folder, fsync, rename), and nothing left
// behind by a failure, SIGINT, SIGTERM or SIGHUP.
#include <juce_core/juce_core.h>

#include <memory>
#include <vector>

namespace kerf::cli
{

/// A file a command reads, and what messages call it ("input", "chain file").
struct ReadFile
{
    juce::File file;
    juce::String role;
};

/// "" when `out` may be written; otherwise the reason: `out` is one of `reads` (the same
/// path, another spelling of it, or the same file through a symbolic or hard link), a
/// directory, in a folder that does not exist, or without one of `extensions` (a
/// semicolon-separated list such as ".wav;.wave"; empty = any name).
juce::String checkOutputPath(const juce::File& out, const std::vector<ReadFile>& reads,
                             const juce::String& extensions);

/// One output file written atomically. `begin` creates a temporary file beside the target
/// and arms a SIGINT/SIGTERM/SIGHUP handler, which deletes it and exits with 128 + the
/// signal number; `commit` syncs it to disk and renames it over the target. Without a successful
/// commit the temporary is deleted and an existing target stays as it was.
class AtomicOutput
{
public:
    explicit AtomicOutput(juce::File target);
    ~AtomicOutput();
    AtomicOutput(const AtomicOutput&) = delete;
    AtomicOutput& operator=(const AtomicOutput&) = delete;

    /// Creates the temporary file; returns "" or the reason it could not.
    juce::String begin();
    /// A stream that writes the temporary file from its start (unbuffered; write errors
    /// are remembered and reported by `commit`). Call once, after `begin`.
    std::unique_ptr<juce::OutputStream> stream();
    /// Flushes the temporary to disk, renames it over the target and syncs the folder;
    /// returns "" or the reason. Destroy the stream (and any writer owning it) first.
    juce::String commit();

    const juce::File& target() const noexcept { return target_; }
    /// The first write error ("" when none), e.g. "No space left on device".
    const juce::String& writeError() const noexcept { return writeError_; }

private:
    class Stream;
    void discard() noexcept;

    juce::File target_, temp_;
    int fd_ = -1;
    bool armed_ = false;
    bool writeFailed_ = false;
    juce::String writeError_;
};

} // namespace kerf::cli
