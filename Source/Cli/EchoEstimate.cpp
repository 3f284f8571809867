// `kerf echo-estimate IN [--min-delay-ms A] [--max-delay-ms B] [--max-reflections K] [--json]
//  [--write-chain OUT.json]`
#include "Analysis/EchoEstimator.h"
#include "AudioInput.h"
#include "ChainFile.h"
#include "Commands.h"
#include "NumberText.h"
#include "SafeOutput.h"

#include <cstdio>
#include <iostream>

namespace kerf::cli
{

const char* const kEchoEstimateHelp =
    R"(Usage: kerf echo-estimate IN [--min-delay-ms A] [--max-delay-ms B]
                          [--max-reflections K] [--json] [--write-chain OUT.json]

Estimates the discrete reflections in a recording (a voice that arrives again a few
milliseconds later, weaker) from the recording alone: delay, gain and a confidence (0..1)
for each. Channels are mixed to mono for the estimate.

Options:
  --min-delay-ms A     shortest delay searched (default 1.5)
  --max-delay-ms B     longest delay searched (default 100, at most 250)
  --max-reflections K  how many reflections to look for, 1 to 4 (default 4)
  --json               {"sample_rate": ..., "reflections": [{"delay_ms": ...,
                       "delay_samples": ..., "gain": ..., "confidence": ...}]}
  --write-chain FILE   write a chain file whose echo_cancel stage cancels what was found
                       (exact inverse when it is stable, otherwise marked non_causal)
A recording without a discrete echo reports none.
)";

namespace
{
std::string number(double v)
{
    return formatNumber(v, 10);
}

bool parseNumber(const juce::String& text, double& out)
{
    if (text.isEmpty() || !text.containsOnly("0123456789.eE+-"))
        return false;
    out = readNumber(text);
    return true;
}
} // namespace

int runEchoEstimate(Args args)
{
    const auto minText = args.option("--min-delay-ms");
    const auto maxText = args.option("--max-delay-ms");
    const auto countText = args.option("--max-reflections");
    const auto chainOut = args.option("--write-chain");
    const bool json = args.flag("--json");
    if (args.missingValue)
    {
        printError("option " + args.missingName + " needs a value (see kerf echo-estimate --help)");
        return kExitUsage;
    }
    if (auto unknown = args.unknownOption(); unknown.isNotEmpty())
    {
        printError("echo-estimate: unknown option " + unknown + " (see kerf echo-estimate --help)");
        return kExitUsage;
    }
    const auto pos = args.positionals();
    if (pos.size() != 1)
    {
        printError("echo-estimate needs one input file (see kerf echo-estimate --help)");
        return kExitUsage;
    }
    dsp::EchoEstimatorOptions options;
    if (minText.isNotEmpty() &&
        (!parseNumber(minText, options.minDelayMs) || options.minDelayMs < dsp::kMinEchoDelayMs))
    {
        printError("--min-delay-ms must be a number of at least " +
                   juce::String(dsp::kMinEchoDelayMs));
        return kExitUsage;
    }
    if (maxText.isNotEmpty() &&
        (!parseNumber(maxText, options.maxDelayMs) || options.maxDelayMs > dsp::kMaxEchoDelayMs))
    {
        printError("--max-delay-ms must be a number of at most " +
                   juce::String(dsp::kMaxEchoDelayMs));
        return kExitUsage;
    }
    if (!(options.maxDelayMs > options.minDelayMs))
    {
        printError("--max-delay-ms must be larger than --min-delay-ms");
        return kExitUsage;
    }
    if (countText.isNotEmpty())
    {
        options.maxReflections = countText.getIntValue();
        if (countText != juce::String(options.maxReflections) || options.maxReflections < 1 ||
            options.maxReflections > dsp::kMaxEchoReflections)
        {
            printError("--max-reflections must be a whole number from 1 to 4");
            return kExitUsage;
        }
    }

    const auto cwd = juce::File::getCurrentWorkingDirectory();
    const auto chainFile = cwd.getChildFile(chainOut);
    if (chainOut.isNotEmpty())
        if (const auto problem =
                checkOutputPath(chainFile, {{cwd.getChildFile(pos[0]), "input file"}}, {});
            problem.isNotEmpty())
        {
            printError(problem);
            return kExitFailure;
        }
    juce::String error;
    auto input = AudioInput::open(cwd.getChildFile(pos[0]), error);
    if (input == nullptr)
    {
        printError(error);
        return kExitFailure;
    }
    auto& reader = input->reader();
    const double rate = reader.sampleRate;
    const auto length = reader.lengthInSamples;
    const int channels = static_cast<int>(reader.numChannels);
    // Grown block by block: the header's length is only a promise (a 108-byte WAV claiming
    // 4 billion samples made an up-front allocation abort; found while writing the
    // audio-input fuzz target, Tests/fuzz/regressions/audio_input).
    std::vector<float> mono;
    juce::AudioBuffer<float> block(channels, 65536);
    for (juce::int64 done = 0; done < length;)
    {
        const int n = static_cast<int>(std::min<juce::int64>(65536, length - done));
        if (!input->read(block, n, done))
        {
            printError("input " + pos[0] + " is truncated or damaged");
            return kExitFailure;
        }
        mono.resize(static_cast<std::size_t>(done + n), 0.0f);
        for (int ch = 0; ch < channels; ++ch)
            for (int i = 0; i < n; ++i)
                mono[static_cast<std::size_t>(done + i)] +=
                    block.getSample(ch, i) / static_cast<float>(channels);
        done += n;
    }

    const auto estimate = dsp::estimateEchoes(mono.data(), mono.size(), rate, options);
    if (json)
    {
        std::cout << "{\"sample_rate\": " << number(rate) << ", \"reflections\": [";
        for (std::size_t k = 0; k < estimate.reflections.size(); ++k)
        {
            const auto& r = estimate.reflections[k];
            std::cout << (k ? ", " : "") << "{\"delay_ms\": " << number(r.delayMs)
                      << ", \"delay_samples\": " << number(r.delaySamples)
                      << ", \"gain\": " << number(r.gain)
                      << ", \"confidence\": " << number(r.confidence) << "}";
        }
        std::cout << "]}\n";
    }
    else
    {
        std::cout << pos[0] << ": " << estimate.reflections.size() << " reflection"
                  << (estimate.reflections.size() == 1 ? "" : "s") << " found at " << number(rate)
                  << " Hz\n";
        for (const auto& r : estimate.reflections)
            std::cout << "  delay " << number(r.delayMs) << " ms (" << number(r.delaySamples)
                      << " samples), gain " << number(r.gain) << ", confidence "
                      << number(r.confidence) << "\n";
        if (!estimate.message.empty())
            std::cout << "  " << estimate.message << "\n";
    }

    if (chainOut.isNotEmpty())
    {
        dsp::ChainSpec chain;
        if (!estimate.reflections.empty())
        {
            dsp::StageSpec stage;
            stage.type = dsp::StageType::echoCancel;
            stage.echo = dsp::echoSettingsFromEstimate(estimate, dsp::EchoMethod::exact, 4);
            // An unstable causal inverse (a reflection as strong as the direct sound) can
            // still be cancelled offline, backwards in time.
            stage.nonCausal = !dsp::checkEchoStability(stage.echo, rate).stable;
            chain.push(stage);
        }
        // Atomic: a temporary file beside the target, renamed over it when complete.
        AtomicOutput output(chainFile);
        auto problem = output.begin();
        if (problem.isEmpty())
        {
            const auto text =
                chainToJson(chain, "Echo estimate of " + juce::File(pos[0]).getFileName());
            output.stream()->writeText(text, false, false, nullptr);
            problem = output.commit();
        }
        if (problem.isNotEmpty())
        {
            printError(problem);
            return kExitFailure;
        }
        std::cerr << "kerf: wrote " << chainFile.getFullPathName() << "\n";
    }
    return kExitOk;
}

} // namespace kerf::cli
