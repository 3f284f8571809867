// `kerf`: Kerf's command-line program for batch work.
#include "Commands.h"

#include <cstdio>
#include <iostream>

namespace kerf::cli
{

bool Args::flag(const juce::String& name)
{
    const int i = rest.indexOf(name);
    if (i < 0)
        return false;
    rest.remove(i);
    return true;
}

juce::String Args::option(const juce::String& name)
{
    const int i = rest.indexOf(name);
    if (i < 0)
        return {};
    if (i + 1 >= rest.size() || (rest[i + 1].startsWith("--") && rest[i + 1].length() > 2))
    {
        missingValue = true;
        missingName = name;
        rest.remove(i);
        return {};
    }
    auto value = rest[i + 1];
    rest.removeRange(i, 2);
    return value;
}

juce::StringArray Args::positionals() const
{
    juce::StringArray out;
    for (const auto& w : rest)
        if (!(w.startsWith("--") && w.length() > 2))
            out.add(w);
    return out;
}

juce::String Args::unknownOption() const
{
    for (const auto& w : rest)
        if (w.startsWith("--") && w.length() > 2)
            return w;
    return {};
}

std::string formatNumber(double value, int digits)
{
    char buf[48];
    std::snprintf(buf, sizeof(buf), "%.*g", digits, value);
    return buf;
}

void printError(const juce::String& message)
{
    std::cerr << "kerf: " << message.toStdString() << std::endl;
}

} // namespace kerf::cli

namespace
{
const char* const kMainHelp =
    R"(kerf - Kerf's command line: filter audio files through a Kerf chain.

Usage:
  kerf render IN OUT --chain FILE [--switch SECONDS:FILE]... [--glide MS] [--bits 32|24|16]
  kerf response --chain FILE [--rate HZ] [--points N | --freqs F1,F2,...] [--format csv|json]
                [--channel left|right|mid|side] [--poles] [--plot FILE.png]
  kerf echo-estimate IN [--min-delay-ms A] [--max-delay-ms B] [--max-reflections K]
                [--json] [--write-chain OUT.json]
  kerf SUBCOMMAND --help
  kerf --help | --version

Subcommands:
  render     process an audio file (WAV, AIFF, FLAC) through a chain, write WAV
  response   print a chain's frequency response, computed from its system function
  echo-estimate  find a recording's discrete reflections (delay, gain, confidence)

Chain files are JSON ("format": "kerf-chain"); see README.md.
Exit status: 0 success, 1 failure (message on stderr), 2 usage error,
130 / 143 stopped by SIGINT (Ctrl-C) / SIGTERM (no partial output is left).
)";
} // namespace

int main(int argc, char* argv[])
{
    using namespace kerf::cli;
    juce::StringArray words;
    for (int i = 1; i < argc; ++i)
        words.add(juce::String::fromUTF8(argv[i]));

    if (words.isEmpty() || words[0] == "--help" || words[0] == "-h" || words[0] == "help")
    {
        std::cout << kMainHelp;
        return words.isEmpty() ? kExitUsage : kExitOk;
    }
    if (words[0] == "--version")
    {
        std::cout << "kerf " << KERF_VERSION_STRING << "\n";
        return kExitOk;
    }
    const juce::String command = words[0];
    words.remove(0);
    const bool wantsHelp = words.contains("--help") || words.contains("-h");
    if (command == "render")
    {
        if (wantsHelp)
        {
            std::cout << kRenderHelp;
            return kExitOk;
        }
        return runRender(Args(words));
    }
    if (command == "response")
    {
        if (wantsHelp)
        {
            std::cout << kResponseHelp;
            return kExitOk;
        }
        return runResponse(Args(words));
    }
    if (command == "echo-estimate")
    {
        if (wantsHelp)
        {
            std::cout << kEchoEstimateHelp;
            return kExitOk;
        }
        return runEchoEstimate(Args(words));
    }
    printError("unknown subcommand '" + command + "' (try kerf --help)");
    return kExitUsage;
}
