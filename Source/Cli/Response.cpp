// `kerf response --chain FILE [--rate HZ] [--points N | --freqs F1,...] [--format csv|json]`
#include "ChainFile.h"
#include "Commands.h"
#include "Response/SystemFunction.h"

#include <cstdio>
#include <iostream>

namespace kerf::cli
{

const char* const kResponseHelp =
    R"(Usage: kerf response --chain FILE [--rate HZ] [--points N | --freqs F1,F2,...]
                     [--format csv|json]

Prints the chain's frequency response computed from its system function H(z) (not measured).

Options:
  --chain FILE     chain file, required
  --rate HZ        sample rate (default 48000)
  --points N       N log-spaced frequencies from 10 Hz to just below Nyquist (default 512)
  --freqs LIST     comma-separated frequencies in Hz instead (each above 0, below Nyquist)
  --format F       csv (default): freq_hz,magnitude_db,phase_deg,group_delay_samples
                   json: {"sample_rate": ..., "points": [{"freq_hz": ..., ...}]}
Phase is unwrapped along the listed frequencies; group delay is in samples.
)";

namespace
{
std::string number(double v)
{
    char buf[40];
    std::snprintf(buf, sizeof(buf), "%.12g", v);
    return buf;
}
} // namespace

int runResponse(Args args)
{
    const auto chainPath = args.option("--chain");
    const auto rateText = args.option("--rate");
    const auto pointsText = args.option("--points");
    const auto freqsText = args.option("--freqs");
    const auto format = args.option("--format");
    if (args.missingValue)
    {
        printError("option " + args.missingName + " needs a value (see kerf response --help)");
        return kExitUsage;
    }
    if (auto unknown = args.unknownOption(); unknown.isNotEmpty())
    {
        printError("response: unknown option " + unknown + " (see kerf response --help)");
        return kExitUsage;
    }
    if (!args.positionals().isEmpty())
    {
        printError("response: unexpected argument '" + args.positionals()[0] + "'");
        return kExitUsage;
    }
    if (chainPath.isEmpty())
    {
        printError("response needs --chain FILE (see kerf response --help)");
        return kExitUsage;
    }
    if (format.isNotEmpty() && format != "csv" && format != "json")
    {
        printError("--format must be csv or json, not '" + format + "'");
        return kExitUsage;
    }
    double rate = 48000.0;
    if (rateText.isNotEmpty())
    {
        rate = rateText.getDoubleValue();
        if (!(rate >= 1000.0 && rate <= 1536000.0) || !rateText.containsOnly("0123456789.eE+"))
        {
            printError("--rate must be a sample rate in Hz from 1000 to 1536000, not '" + rateText +
                       "'");
            return kExitUsage;
        }
    }
    const double nyquist = 0.5 * rate;
    if (pointsText.isNotEmpty() && freqsText.isNotEmpty())
    {
        printError("use either --points or --freqs, not both");
        return kExitUsage;
    }
    std::vector<double> freqs;
    if (freqsText.isNotEmpty())
    {
        auto items = juce::StringArray::fromTokens(freqsText, ",", "");
        for (auto item : items)
        {
            item = item.trim();
            const double f = item.getDoubleValue();
            if (item.isEmpty() || !item.containsOnly("0123456789.eE+-") || !(f > 0.0) ||
                !(f < nyquist))
            {
                printError("--freqs: '" + item +
                           "' is not a frequency above 0 and below Nyquist (" +
                           juce::String(nyquist) + " Hz)");
                return kExitUsage;
            }
            freqs.push_back(f);
        }
    }
    else
    {
        int points = 512;
        if (pointsText.isNotEmpty())
        {
            points = pointsText.getIntValue();
            if (pointsText != juce::String(points) || points < 1 || points > 1000000)
            {
                printError("--points must be a whole number from 1 to 1000000");
                return kExitUsage;
            }
        }
        freqs = dsp::logSpacedFrequencies(10.0, nyquist * 0.9999, points);
    }

    const auto chain =
        readChainFile(juce::File::getCurrentWorkingDirectory().getChildFile(chainPath));
    if (!chain.ok)
    {
        printError(chain.error);
        return kExitFailure;
    }
    const auto points = dsp::chainResponse(chain.chain, rate, freqs);
    if (format == "json")
    {
        std::cout << "{\"sample_rate\": " << number(rate) << ", \"points\": [";
        for (std::size_t i = 0; i < points.size(); ++i)
        {
            const auto& p = points[i];
            std::cout << (i ? ",\n  " : "\n  ") << "{\"freq_hz\": " << number(p.freqHz)
                      << ", \"magnitude_db\": " << number(p.magnitudeDb)
                      << ", \"phase_deg\": " << number(p.phaseDeg)
                      << ", \"group_delay_samples\": " << number(p.groupDelaySamples) << "}";
        }
        std::cout << "\n]}\n";
    }
    else
    {
        std::cout << "freq_hz,magnitude_db,phase_deg,group_delay_samples\n";
        for (const auto& p : points)
            std::cout << number(p.freqHz) << "," << number(p.magnitudeDb) << ","
                      << number(p.phaseDeg) << "," << number(p.groupDelaySamples) << "\n";
    }
    return kExitOk;
}

} // namespace kerf::cli
