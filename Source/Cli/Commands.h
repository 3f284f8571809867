#pragma once
// The `kerf` command line: subcommands share these helpers.
#include <juce_core/juce_core.h>

#include <string>

namespace kerf::cli
{

/// Exit codes: 0 success, 1 processing/IO failure, 2 usage error.
inline constexpr int kExitOk = 0, kExitFailure = 1, kExitUsage = 2;

/// Simple argument cursor: positional words and --options with values.
class Args
{
public:
    explicit Args(juce::StringArray words) : rest(std::move(words)) {}
    /// True (and consumed) when the flag is present.
    bool flag(const juce::String& name);
    /// The value after --name (consumed), or empty; sets `missingValue` when the flag has none.
    juce::String option(const juce::String& name);
    /// Remaining positional words (after options were taken).
    juce::StringArray positionals() const;
    /// An option-looking word nobody asked for, or "".
    juce::String unknownOption() const;
    bool missingValue = false;
    juce::String missingName;

private:
    juce::StringArray rest;
};

/// A number as text with `digits` significant digits (17 reads back exactly).
std::string formatNumber(double value, int digits);

/// Prints to stderr with a "kerf: " prefix.
void printError(const juce::String& message);

int runRender(Args args);
int runResponse(Args args);
int runEchoEstimate(Args args);

extern const char* const kRenderHelp;
extern const char* const kResponseHelp;
extern const char* const kEchoEstimateHelp;

} // namespace kerf::cli
