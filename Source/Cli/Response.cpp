// `kerf response --chain FILE [--rate HZ] [--points N | --freqs F1,...] [--format csv|json]`
#include "ChainFile.h"
#include "Commands.h"
#include "NumberText.h"
#include "Plot.h"
#include "Response/SystemFunction.h"
#include "SafeOutput.h"

#include <cstdio>
#include <iostream>

namespace kerf::cli
{

const char* const kResponseHelp =
    R"(Usage: kerf response --chain FILE [--rate HZ] [--points N | --freqs F1,F2,...]
                     [--format csv|json] [--channel C] [--poles] [--plot FILE.png]

Prints the chain's frequency response computed from its system function H(z) (not measured).

Options:
  --chain FILE     chain file, required
  --rate HZ        sample rate (default 48000)
  --points N       N log-spaced frequencies from 10 Hz to just below Nyquist (default 512)
  --freqs LIST     comma-separated frequencies in Hz instead (each above 0, below Nyquist)
  --format F       csv (default): freq_hz,magnitude_db,phase_deg,group_delay_samples
                   json: {"sample_rate": ..., "points": [{"freq_hz": ..., ...}]}
  --channel C      the path to evaluate: left (default), right, mid or side; with stages
                   on one channel or on mid/side the chain is a two-by-two system, and
                   each path is that channel's output for that channel's input alone
  --poles          print poles and zeros instead (JSON): per stage, with its sections'
                   coefficients [b0, b1, b2, 1, a1, a2], and for the chain's path
  --plot FILE.png  draw magnitude, phase and group delay over log frequency to a PNG
                   (the table is then printed only when --format is given)
Phase is unwrapped along the listed frequencies; group delay is in samples.
)";

namespace
{
std::string number(double v)
{
    return formatNumber(v, 17);
}

std::string complexList(const std::vector<std::complex<double>>& values)
{
    std::string out = "[";
    for (std::size_t i = 0; i < values.size(); ++i)
        out += (i ? ", [" : "[") + number(values[i].real()) + ", " + number(values[i].imag()) + "]";
    return out + "]";
}

std::string str(std::string_view v)
{
    return std::string(v);
}

void printPolesZeros(const dsp::ChainSpec& chain, double rate, dsp::ChannelView view,
                     const juce::String& viewName)
{
    const bool product = dsp::viewIsProduct(chain, view);
    std::vector<std::complex<double>> chainZeros, chainPoles;
    double chainGain = 1.0;
    bool allListed = true;
    std::cout << "{\"sample_rate\": " << number(rate) << ", \"channel\": \""
              << viewName.toStdString() << "\",\n \"stages\": [";
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& spec = chain.stages[static_cast<std::size_t>(i)];
        const auto sections = dsp::designStage(spec, rate);
        const auto pz = dsp::stagePolesZeros(spec, rate);
        std::cout << (i ? ",\n  " : "\n  ") << "{\"index\": " << i << ", \"type\": \""
                  << str(dsp::stageTypeName(spec.type)) << "\", \"channels\": \""
                  << str(dsp::channelModeName(spec.channels))
                  << "\", \"enabled\": " << (spec.enabled ? "true" : "false")
                  << ", \"sections\": [";
        for (int j = 0; j < sections.count; ++j)
        {
            const auto& c = sections.sections[static_cast<std::size_t>(j)];
            std::cout << (j ? ", [" : "[") << number(c.b0) << ", " << number(c.b1) << ", "
                      << number(c.b2) << ", 1, " << number(c.a1) << ", " << number(c.a2) << "]";
        }
        if (pz.listed)
            std::cout << "], \"zeros\": " << complexList(pz.zeros)
                      << ", \"poles\": " << complexList(pz.poles)
                      << ", \"gain\": " << number(pz.gain) << "}";
        else
            std::cout << "], \"zeros\": null, \"poles\": null, \"note\": \"" << pz.note << "\"}";
        if (!pz.listed && spec.enabled)
            allListed = false;
        if (product && spec.enabled && dsp::stageInView(spec.channels, view))
        {
            chainZeros.insert(chainZeros.end(), pz.zeros.begin(), pz.zeros.end());
            chainPoles.insert(chainPoles.end(), pz.poles.begin(), pz.poles.end());
            chainGain *= pz.gain;
        }
    }
    std::cout << "\n ],\n \"chain\": ";
    if (!allListed)
        std::cout << "null, \"note\": \"a stage's roots are not listed; see the stages\"";
    else if (product)
        std::cout << "{\"zeros\": " << complexList(chainZeros)
                  << ", \"poles\": " << complexList(chainPoles)
                  << ", \"gain\": " << number(chainGain) << "}";
    else // a sum of paths: its zeros are not the stages' zeros
        std::cout << "null, \"note\": \"a mid/side stage makes this path a sum of terms; "
                     "see each stage's own poles and zeros\"";
    std::cout << "\n}\n";
}
} // namespace

int runResponse(Args args)
{
    const auto chainPath = args.option("--chain");
    const auto rateText = args.option("--rate");
    const auto pointsText = args.option("--points");
    const auto freqsText = args.option("--freqs");
    const auto format = args.option("--format");
    const auto channelText = args.option("--channel");
    const auto plotPath = args.option("--plot");
    const bool poles = args.flag("--poles");
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
    dsp::ChannelView view = dsp::ChannelView::left;
    if (channelText.isNotEmpty())
    {
        const juce::StringArray views{"left", "right", "mid", "side"};
        const int index = views.indexOf(channelText);
        if (index < 0)
        {
            printError("--channel must be left, right, mid or side, not '" + channelText + "'");
            return kExitUsage;
        }
        view = static_cast<dsp::ChannelView>(index);
    }
    double rate = 48000.0;
    if (rateText.isNotEmpty())
    {
        rate = readNumber(rateText);
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
            const double f = readNumber(item);
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

    const auto cwd = juce::File::getCurrentWorkingDirectory();
    if (plotPath.isNotEmpty())
        if (const auto problem = checkOutputPath(
                cwd.getChildFile(plotPath), {{cwd.getChildFile(chainPath), "chain file"}}, ".png");
            problem.isNotEmpty())
        {
            printError(problem);
            return kExitFailure;
        }
    const auto chain = readChainFile(cwd.getChildFile(chainPath));
    if (!chain.ok)
    {
        printError(chain.error);
        return kExitFailure;
    }
    const juce::String viewName = channelText.isNotEmpty() ? channelText : juce::String("left");
    if (poles)
    {
        printPolesZeros(chain.chain, rate, view, viewName);
        return kExitOk;
    }
    const auto points = dsp::chainResponse(chain.chain, rate, freqs, view);
    if (plotPath.isNotEmpty())
    {
        const auto file = cwd.getChildFile(plotPath);
        const juce::String title = juce::File(chainPath).getFileName() + "  |  " +
                                   juce::String(rate, 0) + " Hz  |  " + viewName + " path";
        const auto err = writeResponsePlot(file, points, rate, title);
        if (err.isNotEmpty())
        {
            printError(err);
            return kExitFailure;
        }
        std::cerr << "kerf: wrote " << file.getFullPathName() << "\n";
        if (format.isEmpty())
            return kExitOk;
    }
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
