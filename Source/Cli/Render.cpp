// `kerf render IN OUT --chain FILE [--switch SECONDS:FILE]... [--glide MS] [--bits 32|24|16]`
#include "AudioInput.h"
#include "ChainFile.h"
#include "Commands.h"
#include "NumberText.h"
#include "SafeOutput.h"

#include <juce_audio_formats/juce_audio_formats.h>

#include <cmath>
#include <iostream>
#include <random>

namespace kerf::cli
{

const char* const kRenderHelp =
    R"(Usage: kerf render IN OUT --chain FILE [--switch SECONDS:FILE]... [--glide MS]
                  [--bits 32|24|16]

Processes IN (WAV, AIFF or FLAC) through the chain in FILE with the same DSP code as the
plugin and writes OUT as WAV with IN's sample rate, channel count and length.

Options:
  --chain FILE   chain file (JSON, "format": "kerf-chain"), required
  --switch T:FILE
                 from T seconds into IN on, the chain in FILE (repeatable, T ascending);
                 the change glides or crossfades exactly as in the plugin, no click
  --glide MS     glide and crossfade time of the switches, 0 - 1000 ms (20; 0 = the
                 shortest clean moves: 12 ms for glides, 6 ms for crossfades)
  --bits N       32 (default): 32-bit float, keeps values above full scale;
                 24 or 16: PCM with TPDF dither; clipped samples are counted and reported

OUT must be named .wav. It is written to a temporary file in OUT's folder and renamed over
OUT when complete, so a failure or Ctrl-C never leaves a partial file and an existing OUT
stays as it was until then. kerf refuses to write over IN or a chain file, also through
a link. No output ceiling is applied (the plugin's output protection is not part of a
render).
)";

namespace
{
/// Replaces samples that are not numbers (NaN, infinities) by silence; returns how many.
juce::int64 silenceNonFinite(juce::AudioBuffer<float>& b, int n)
{
    juce::int64 count = 0;
    for (int ch = 0; ch < b.getNumChannels(); ++ch)
    {
        float* x = b.getWritePointer(ch);
        for (int i = 0; i < n; ++i)
            if (!std::isfinite(x[i]))
            {
                x[i] = 0.0f;
                ++count;
            }
    }
    return count;
}
} // namespace

int runRender(Args args)
{
    const auto chainPath = args.option("--chain");
    const auto bitsText = args.option("--bits");
    const auto glideText = args.option("--glide");
    juce::StringArray switchTexts;
    for (auto t = args.option("--switch"); t.isNotEmpty(); t = args.option("--switch"))
        switchTexts.add(t);
    if (args.missingValue)
    {
        printError("option " + args.missingName + " needs a value (see kerf render --help)");
        return kExitUsage;
    }
    if (auto unknown = args.unknownOption(); unknown.isNotEmpty())
    {
        printError("render: unknown option " + unknown + " (see kerf render --help)");
        return kExitUsage;
    }
    const auto pos = args.positionals();
    if (pos.size() != 2 || chainPath.isEmpty())
    {
        printError("render needs IN, OUT and --chain FILE (see kerf render --help)");
        return kExitUsage;
    }
    int bits = 32;
    if (bitsText.isNotEmpty())
    {
        bits = bitsText.getIntValue();
        if (bitsText != juce::String(bits) || (bits != 32 && bits != 24 && bits != 16))
        {
            printError("--bits must be 32, 24 or 16, not '" + bitsText + "'");
            return kExitUsage;
        }
    }

    double glideMs = dsp::kDefaultGlideMs;
    if (glideText.isNotEmpty())
    {
        glideMs = readNumber(glideText);
        if (!glideText.containsOnly("0123456789.") || glideMs < 0.0 || glideMs > dsp::kMaxGlideMs)
        {
            printError("--glide must be a time in ms from 0 to 1000, not '" + glideText + "'");
            return kExitUsage;
        }
    }
    // --switch T:FILE, times ascending.
    struct Switch
    {
        double seconds = 0.0;
        juce::String path;
        dsp::ChainSpec chain;
    };
    std::vector<Switch> switches;
    for (const auto& t : switchTexts)
    {
        const auto timeText = t.upToFirstOccurrenceOf(":", false, false).trim();
        const auto path = t.fromFirstOccurrenceOf(":", false, false);
        const double seconds = readNumber(timeText);
        if (!t.contains(":") || path.isEmpty() || timeText.isEmpty() ||
            !timeText.containsOnly("0123456789.") || seconds < 0.0)
        {
            printError("--switch needs SECONDS:FILE (for example 2.5:next.json), not '" + t + "'");
            return kExitUsage;
        }
        if (!switches.empty() && seconds <= switches.back().seconds)
        {
            printError("--switch times must increase: " + timeText + " s comes after " +
                       juce::String(switches.back().seconds) + " s");
            return kExitUsage;
        }
        switches.push_back({seconds, path, {}});
    }

    const auto cwd = juce::File::getCurrentWorkingDirectory();
    const juce::File inFile = cwd.getChildFile(pos[0]);
    const juce::File outFile = cwd.getChildFile(pos[1]);

    // The input itself is checked when it is opened (AudioInput): a directory, a missing or
    // unreadable file each get their own message. The output must be none of the files read.
    std::vector<ReadFile> reads{{inFile, "input file"},
                                {cwd.getChildFile(chainPath), "chain file"}};
    for (const auto& sw : switches)
        reads.push_back({cwd.getChildFile(sw.path), "chain file"});
    if (const auto problem = checkOutputPath(outFile, reads, ".wav;.wave"); problem.isNotEmpty())
    {
        printError(problem);
        return kExitFailure;
    }

    const auto chainResult = readChainFile(cwd.getChildFile(chainPath));
    if (!chainResult.ok)
    {
        printError(chainResult.error);
        return kExitFailure;
    }
    for (auto& sw : switches)
    {
        const auto r = readChainFile(cwd.getChildFile(sw.path));
        if (!r.ok)
        {
            printError(r.error);
            return kExitFailure;
        }
        sw.chain = r.chain;
    }

    juce::String openError;
    auto input = AudioInput::open(inFile, openError);
    if (input == nullptr)
    {
        printError(openError);
        return kExitFailure;
    }
    auto* reader = &input->reader();

    const double rate = reader->sampleRate;
    const int numChannels = static_cast<int>(reader->numChannels);
    const juce::int64 length = reader->lengthInSamples;
    if (numChannels > dsp::ChainProcessor::kMaxChannels)
    {
        printError("input has " + juce::String(numChannels) + " channels; at most " +
                   juce::String(dsp::ChainProcessor::kMaxChannels) + " are supported");
        return kExitFailure;
    }

    // Echo-cancellation stages: an exact inverse must be stable at this rate (refused before
    // anything is written); non-causal ones run backwards over the whole file first.
    bool hasNonCausal = false;
    for (std::size_t c = 0; c <= switches.size(); ++c)
    {
        const dsp::ChainSpec& chainSpec = c == 0 ? chainResult.chain : switches[c - 1].chain;
        const juce::String chainName =
            juce::File(c == 0 ? chainPath : switches[c - 1].path).getFileName();
        for (int i = 0; i < chainSpec.numStages; ++i)
        {
            const auto& spec = chainSpec.stages[static_cast<std::size_t>(i)];
            if (!spec.enabled || spec.type != dsp::StageType::echoCancel)
                continue;
            if (spec.nonCausal)
            {
                if (!switches.empty())
                {
                    // A backwards pass over the whole file has no place in a timeline.
                    printError(chainName + ": stage " + juce::String(i) +
                               ": a non_causal echo_cancel stage cannot be part of a --switch "
                               "timeline (render that part on its own)");
                    return kExitFailure;
                }
                hasNonCausal = true;
                continue;
            }
            if (spec.echo.method == dsp::EchoMethod::exact)
            {
                const auto stability = dsp::checkEchoStability(spec.echo, rate);
                if (!stability.stable)
                {
                    printError(chainName + ": stage " + juce::String(i) + ": " +
                               juce::String(stability.message));
                    return kExitFailure;
                }
            }
        }
    }
    juce::int64 nonFiniteInput = 0;         // input samples that were NaN or infinite
    std::vector<std::vector<double>> whole; // the input, when a non-causal stage needs it all
    if (hasNonCausal)
    {
        const auto total = static_cast<std::size_t>(length);
        whole.assign(static_cast<std::size_t>(numChannels), std::vector<double>(total, 0.0));
        juce::AudioBuffer<float> block(numChannels, 65536);
        for (juce::int64 done = 0; done < length;)
        {
            const int n = static_cast<int>(std::min<juce::int64>(65536, length - done));
            if (!input->read(block, n, done))
            {
                printError("input " + inFile.getFullPathName() +
                           " is truncated or damaged: it ends before the length its header states");
                return kExitFailure;
            }
            nonFiniteInput += silenceNonFinite(block, n);
            for (int ch = 0; ch < numChannels; ++ch)
                for (int i = 0; i < n; ++i)
                    whole[static_cast<std::size_t>(ch)][static_cast<std::size_t>(done + i)] =
                        block.getSample(ch, i);
            done += n;
        }
        for (int i = 0; i < chainResult.chain.numStages; ++i)
        {
            const auto& spec = chainResult.chain.stages[static_cast<std::size_t>(i)];
            if (!spec.enabled || spec.type != dsp::StageType::echoCancel || !spec.nonCausal)
                continue;
            for (auto& channel : whole)
            {
                const auto result =
                    dsp::cancelEchoNonCausal(spec.echo, rate, channel.data(), total);
                if (!result.ok)
                {
                    printError(juce::File(chainPath).getFileName() + ": stage " + juce::String(i) +
                               ": " + juce::String(result.message));
                    return kExitFailure;
                }
            }
        }
    }

    // Written to a temporary file beside OUT and renamed over it when complete; a failure,
    // SIGINT or SIGTERM removes the temporary (SafeOutput).
    AtomicOutput output(outFile);
    if (const auto problem = output.begin(); problem.isNotEmpty())
    {
        printError(problem);
        return kExitFailure;
    }
    std::unique_ptr<juce::AudioFormatWriter> writer;
    {
        auto out = output.stream();
        juce::WavAudioFormat wav;
        writer.reset(wav.createWriterFor(out.get(), rate, static_cast<unsigned int>(numChannels),
                                         bits, {}, 0));
        if (writer == nullptr)
        {
            printError("cannot create a " + juce::String(bits) + "-bit WAV writer at " +
                       juce::String(rate) + " Hz");
            return kExitFailure;
        }
        out.release(); // the writer owns the stream now
    }

    dsp::ChainProcessor chain;
    constexpr int kBlock = 4096;
    chain.prepare(rate, kBlock, numChannels);
    chain.setGlideMs(glideMs);
    chain.setChain(chainResult.chain);
    std::size_t nextSwitch = 0;
    auto switchSample = [&](std::size_t k)
    { return static_cast<juce::int64>(std::llround(switches[k].seconds * rate)); };

    juce::AudioBuffer<float> buffer(numChannels, kBlock);
    std::mt19937 rng(0x6b657266u); // fixed: the same input renders to the same bits
    std::uniform_real_distribution<double> uniform(-0.5, 0.5);
    const double scale = bits == 32 ? 1.0 : std::ldexp(1.0, bits - 1);
    const double maxCode = scale - 1.0;
    // PCM codes go to the writer as integers, left-justified in 32 bits, so each code lands
    // exactly (JUCE's float-to-integer conversion scales by 2^(bits-1) - 1 and would put
    // every sample above half scale one code low).
    std::vector<std::vector<int>> codes(static_cast<std::size_t>(bits == 32 ? 0 : numChannels),
                                        std::vector<int>(kBlock));
    std::vector<const int*> codePointers;
    for (const auto& c : codes)
        codePointers.push_back(c.data());
    codePointers.push_back(nullptr);
    const int codeShift = 32 - bits;
    juce::int64 clipped = 0; // PCM: samples beyond the largest code after dither
    juce::int64 overs = 0;   // float: samples above full scale, kept
    float peak = 0.0f;

    const bool showProgress = length > static_cast<juce::int64>(5.0 * rate);
    int lastPercent = -1;
    for (juce::int64 done = 0; done < length;)
    {
        const int n = static_cast<int>(std::min<juce::int64>(kBlock, length - done));
        if (hasNonCausal)
        {
            for (int ch = 0; ch < numChannels; ++ch)
                for (int i = 0; i < n; ++i)
                    buffer.setSample(ch, i,
                                     static_cast<float>(whole[static_cast<std::size_t>(ch)]
                                                             [static_cast<std::size_t>(done + i)]));
        }
        else if (!input->read(buffer, n, done))
        {
            printError("input " + inFile.getFullPathName() +
                       " is truncated or damaged: it ends before the length its header states");
            return kExitFailure;
        }
        else
            nonFiniteInput += silenceNonFinite(buffer, n);
        // The timeline: each switch is given to the chain at its own sample, where the
        // click-free layer takes it (at its next update, within 32 samples).
        for (int offset = 0; offset < n;)
        {
            while (nextSwitch < switches.size() && switchSample(nextSwitch) <= done + offset)
                chain.setChain(switches[nextSwitch++].chain);
            int piece = n - offset;
            if (nextSwitch < switches.size())
                piece = static_cast<int>(
                    std::min<juce::int64>(piece, switchSample(nextSwitch) - (done + offset)));
            float* pointers[dsp::ChainProcessor::kMaxChannels];
            for (int ch = 0; ch < numChannels; ++ch)
                pointers[ch] = buffer.getWritePointer(ch) + offset;
            chain.process(pointers, numChannels, piece);
            offset += piece;
        }
        for (int ch = 0; ch < numChannels; ++ch)
        {
            float* x = buffer.getWritePointer(ch);
            for (int i = 0; i < n; ++i)
            {
                peak = std::max(peak, std::abs(x[i]));
                if (bits == 32)
                {
                    overs += std::abs(x[i]) > 1.0f ? 1 : 0;
                    continue;
                }
                // TPDF dither: the sum of two independent uniform variables of 1 LSB each.
                double code = std::round(x[i] * scale + uniform(rng) + uniform(rng));
                if (code > maxCode || code < -scale)
                {
                    ++clipped;
                    code = std::clamp(code, -scale, maxCode);
                }
                codes[static_cast<std::size_t>(ch)][static_cast<std::size_t>(i)] =
                    static_cast<int>(code) * (1 << codeShift);
            }
        }
        if (!(bits == 32 ? writer->writeFromAudioSampleBuffer(buffer, 0, n)
                         : writer->write(codePointers.data(), n)))
        {
            printError("writing " + outFile.getFullPathName() + " failed: " +
                       (output.writeError().isNotEmpty() ? output.writeError()
                                                         : juce::String("disk full?")));
            return kExitFailure;
        }
        done += n;
        if (showProgress)
        {
            const int percent = static_cast<int>(100 * done / length);
            if (percent / 5 != lastPercent / 5)
            {
                std::cerr << "\rkerf: rendering " << percent << "%" << std::flush;
                lastPercent = percent;
            }
        }
    }
    if (showProgress)
        std::cerr << "\n";

    writer.reset(); // writes the final header
    if (const auto problem = output.commit(); problem.isNotEmpty())
    {
        printError(problem);
        return kExitFailure;
    }

    if (nonFiniteInput > 0)
        std::cerr << "kerf: warning: " << nonFiniteInput
                  << " input samples were not numbers (NaN or infinite); they were processed "
                     "as silence\n";
    if (chain.nonFiniteEvents() > 0)
        std::cerr << "kerf: warning: a stage ran away " << chain.nonFiniteEvents()
                  << " times (output beyond +180 dBFS or not a number); those samples were "
                     "silenced and its memories cleared\n";
    if (bits != 32 && clipped > 0)
        std::cerr << "kerf: warning: " << clipped << " samples clipped at full scale in the "
                  << bits << "-bit output (lower the gain or write 32-bit float)\n";
    else if (bits == 32 && overs > 0)
        std::cerr << "kerf: note: " << overs << " samples above full scale (peak "
                  << formatNumber(juce::Decibels::gainToDecibels(static_cast<double>(peak)), 3)
                  << " dBFS); the float output keeps them\n";
    return kExitOk;
}

} // namespace kerf::cli
