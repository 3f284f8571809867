#include "SafeOutput.h"

#include <cerrno>
#include <csignal>
#include <cstring>
#include <fcntl.h>
#include <filesystem>
#include <limits.h>
#include <random>
#include <unistd.h>
#include <utility>

namespace kerf::cli
{

namespace
{
namespace fs = std::filesystem;

// The temporary file the signal handler deletes. Written only while SIGINT and SIGTERM are
// blocked, so the handler never sees it half written.
char gTempPath[PATH_MAX + 1];
volatile std::sig_atomic_t gTempArmed = 0;
struct sigaction gOldInt, gOldTerm, gOldHup;
bool gHandlerInstalled = false;

void writeStderr(const char* text) noexcept
{
    const auto ignored = ::write(STDERR_FILENO, text, std::strlen(text));
    (void)ignored;
}

/// Only async-signal-safe calls here: unlink, write, _exit.
extern "C" void onTerminatingSignal(int sig)
{
    if (gTempArmed != 0)
    {
        ::unlink(gTempPath);
        writeStderr("\nkerf: interrupted; no output written\n");
    }
    else
        writeStderr("\nkerf: interrupted\n");
    ::_exit(128 + sig); // common practice: 130 for SIGINT, 143 for SIGTERM, 129 for SIGHUP
}

/// Blocks SIGINT, SIGTERM and SIGHUP for its lifetime.
struct SignalBlock
{
    sigset_t old{};
    SignalBlock()
    {
        sigset_t set;
        sigemptyset(&set);
        sigaddset(&set, SIGINT);
        sigaddset(&set, SIGTERM);
        sigaddset(&set, SIGHUP);
        pthread_sigmask(SIG_BLOCK, &set, &old);
    }
    ~SignalBlock() { pthread_sigmask(SIG_SETMASK, &old, nullptr); }
    static bool terminationPending()
    {
        sigset_t pending;
        sigemptyset(&pending);
        return sigpending(&pending) == 0 &&
               (sigismember(&pending, SIGINT) == 1 || sigismember(&pending, SIGTERM) == 1 ||
                sigismember(&pending, SIGHUP) == 1);
    }
};

juce::String errnoText(int e)
{
    return juce::String(std::strerror(e));
}

fs::path toPath(const juce::File& f)
{
    return fs::path(f.getFullPathName().toStdString());
}
} // namespace

juce::String checkOutputPath(const juce::File& out, const std::vector<ReadFile>& reads,
                             const juce::String& extensions)
{
    const auto name = out.getFullPathName();
    std::error_code outError;
    const auto outCanonical = fs::weakly_canonical(toPath(out), outError);
    for (const auto& r : reads)
    {
        // Same path after resolving "." and ".." and symbolic links, or the same file
        // (device and inode) through a hard link.
        std::error_code e1, e2;
        const auto canonical = fs::weakly_canonical(toPath(r.file), e1);
        const bool samePath = !outError && !e1 && canonical == outCanonical;
        const bool sameFile = fs::equivalent(toPath(r.file), toPath(out), e2) && !e2;
        if (samePath || sameFile)
            return "output " + name + " is the " + r.role + "; kerf never writes over its input";
    }
    if (out.isDirectory())
        return "output " + name + " is a directory";
    if (!out.getParentDirectory().isDirectory())
        return "output folder " + out.getParentDirectory().getFullPathName() + " does not exist";
    if (extensions.isNotEmpty() && !out.hasFileExtension(extensions))
        return "output " + name + ": the name must end in " +
               juce::StringArray::fromTokens(extensions, ";", "").joinIntoString(" or ");
    return {};
}

class AtomicOutput::Stream : public juce::OutputStream
{
public:
    explicit Stream(AtomicOutput& o) : owner(o) {}
    void flush() override {}
    bool setPosition(juce::int64 p) override
    {
        if (::lseek(owner.fd_, static_cast<off_t>(p), SEEK_SET) < 0)
            return fail(errno);
        position = p;
        return true;
    }
    juce::int64 getPosition() override { return position; }
    bool write(const void* data, size_t n) override
    {
        auto* p = static_cast<const char*>(data);
        while (n > 0)
        {
            const auto w = ::write(owner.fd_, p, n);
            if (w < 0)
            {
                if (errno == EINTR)
                    continue;
                return fail(errno);
            }
            p += w;
            n -= static_cast<size_t>(w);
            position += w;
        }
        return true;
    }

private:
    bool fail(int e)
    {
        if (!owner.writeFailed_)
            owner.writeError_ = errnoText(e);
        owner.writeFailed_ = true;
        return false;
    }
    AtomicOutput& owner;
    juce::int64 position = 0;
};

AtomicOutput::AtomicOutput(juce::File target) : target_(std::move(target)) {}

AtomicOutput::~AtomicOutput()
{
    discard();
    if (gHandlerInstalled)
    {
        sigaction(SIGINT, &gOldInt, nullptr);
        sigaction(SIGTERM, &gOldTerm, nullptr);
        sigaction(SIGHUP, &gOldHup, nullptr);
        gHandlerInstalled = false;
    }
}

juce::String AtomicOutput::begin()
{
    jassert(fd_ < 0 && !gHandlerInstalled); // one output at a time
    struct sigaction action
    {
    };
    action.sa_handler = onTerminatingSignal;
    sigemptyset(&action.sa_mask);
    // A signal ignored when kerf started (a background job of a non-interactive shell)
    // stays ignored (common practice).
    using Slot = std::pair<int, struct sigaction*>;
    for (const auto& [sig, old] :
         {Slot{SIGINT, &gOldInt}, Slot{SIGTERM, &gOldTerm}, Slot{SIGHUP, &gOldHup}})
    {
        sigaction(sig, &action, old);
        if (old->sa_handler == SIG_IGN)
            sigaction(sig, old, nullptr);
    }
    gHandlerInstalled = true;

    const auto folder = target_.getParentDirectory();
    std::random_device seed;
    std::mt19937 rng(seed());
    for (int attempt = 0; attempt < 100; ++attempt)
    {
        temp_ =
            folder.getChildFile("." + target_.getFileName() + ".kerf-" +
                                juce::String::toHexString(static_cast<int>(rng() >> 1)) + ".tmp");
        const auto path = temp_.getFullPathName().toStdString();
        if (path.size() > PATH_MAX)
            return "output path " + target_.getFullPathName() + " is too long";
        SignalBlock block;
        std::memcpy(gTempPath, path.c_str(), path.size() + 1);
        // Mode 0666 less the umask, as any newly created file.
        fd_ = ::open(gTempPath, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
        if (fd_ >= 0)
        {
            gTempArmed = 1;
            armed_ = true;
            return {};
        }
        if (errno != EEXIST)
            return "cannot write in " + folder.getFullPathName() + ": " + errnoText(errno);
    }
    return "cannot create a temporary file in " + folder.getFullPathName();
}

std::unique_ptr<juce::OutputStream> AtomicOutput::stream()
{
    jassert(fd_ >= 0);
    return std::make_unique<Stream>(*this);
}

juce::String AtomicOutput::commit()
{
    const auto name = target_.getFullPathName();
    if (fd_ < 0 || !armed_)
        return "internal error: " + name + " was not begun";
    if (writeFailed_)
        return "writing " + name + " failed: " + writeError_;
    if (::fsync(fd_) != 0 || ::close(fd_) != 0)
    {
        const int e = errno;
        fd_ = -1;
        return "writing " + name + " failed: " + errnoText(e);
    }
    fd_ = -1;
    {
        SignalBlock block;
        // A Ctrl-C that came while the file was finished wins: the handler runs when the
        // block ends and removes the temporary.
        if (SignalBlock::terminationPending())
            return "interrupted";
        if (::rename(temp_.getFullPathName().toRawUTF8(), name.toRawUTF8()) != 0)
            return "cannot move the finished output into place at " + name + ": " +
                   errnoText(errno);
        gTempArmed = 0;
        armed_ = false;
    }
    // The rename itself reaches the disk with the folder.
    const int dir = ::open(target_.getParentDirectory().getFullPathName().toRawUTF8(),
                           O_RDONLY | O_DIRECTORY | O_CLOEXEC);
    if (dir >= 0)
    {
        ::fsync(dir);
        ::close(dir);
    }
    return {};
}

void AtomicOutput::discard() noexcept
{
    if (fd_ >= 0)
    {
        ::close(fd_);
        fd_ = -1;
    }
    if (armed_)
    {
        SignalBlock block;
        ::unlink(gTempPath);
        gTempArmed = 0;
        armed_ = false;
    }
}

} // namespace kerf::cli
