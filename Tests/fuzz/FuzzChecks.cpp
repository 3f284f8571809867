#include "FuzzChecks.h"

#include "AudioInput.h"
#include "ChainFile.h"
#include "Limits.h"
#include "Stages/CombStage.h"
#include "Stages/EchoCanceller.h"

#include <algorithm>
#include <cmath>

namespace kerf::fuzz
{

namespace
{

bool within(double v, double lo, double hi)
{
    return std::isfinite(v) && v >= lo && v <= hi;
}

/// Empty when every field a stage uses lies in the range README.md ("Chain files") documents
/// and its designed sections are finite at 44.1 and 192 kHz; else what is wrong.
juce::String chainProblem(const dsp::ChainSpec& chain)
{
    namespace L = dsp::limits;
    using T = dsp::StageType;
    if (chain.numStages < 0 || chain.numStages > dsp::ChainSpec::kMaxStages)
        return "numStages " + juce::String(chain.numStages);
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        const juce::String at = "stage " + juce::String(i) + ": ";
        if (s.type == T::echoCancel)
        {
            const auto& e = s.echo;
            if (e.numReflections < 1 || e.numReflections > dsp::kMaxEchoReflections)
                return at + "reflections " + juce::String(e.numReflections);
            if (e.terms < 1 || e.terms > dsp::kMaxEchoSeriesTerms)
                return at + "terms " + juce::String(e.terms);
            for (int k = 0; k < e.numReflections; ++k)
            {
                const auto& r = e.reflections[static_cast<std::size_t>(k)];
                if (!within(r.delayMs, dsp::kMinEchoDelayMs, dsp::kMaxEchoDelayMs) ||
                    !within(r.gain, -L::kEchoGainMax, L::kEchoGainMax))
                    return at + "reflection " + juce::String(k) + " out of range";
            }
            continue;
        }
        if (s.type == T::comb)
        {
            const auto& c = s.comb;
            if (!within(c.delayMs, dsp::kCombMinDelayMs, dsp::kCombMaxDelayMs) ||
                !within(c.gain, -dsp::kMaxFeedforwardGain, dsp::kMaxFeedforwardGain) ||
                !within(c.mix, 0.0, 1.0) || !within(c.dampingHz, 0.0, 1.0e6) ||
                !std::isfinite(c.pitchHz))
                return at + "comb field out of range";
            continue;
        }
        if (!within(s.freqHz, L::kFreqMinHz, L::kFreqMaxHz) ||
            !within(s.gainDb, L::kGainMinDb, L::kGainMaxDb) ||
            !(within(s.q, L::kQMin, L::kQMax) || s.q == 0.0) ||
            !within(s.slope, L::kSlopeMin, L::kSlopeMax) || s.order < L::kAllPassOrderMin ||
            s.order > L::kPassOrderMax)
            return at + "section field out of range";
        for (const double rate : {44100.0, 192000.0})
        {
            const auto designed = dsp::designStage(s, rate);
            for (int k = 0; k < designed.count; ++k)
            {
                const auto& b = designed.sections[static_cast<std::size_t>(k)];
                for (const double v : {b.b0, b.b1, b.b2, b.a1, b.a2})
                    if (!std::isfinite(v))
                        return at + "designs a section that is not finite at " +
                               juce::String(rate) + " Hz";
            }
        }
    }
    return {};
}

bool sameChain(const dsp::ChainSpec& a, const dsp::ChainSpec& b)
{
    return a.numStages == b.numStages &&
           std::equal(a.stages.begin(), a.stages.begin() + a.numStages, b.stages.begin());
}

} // namespace

Outcome checkChainFile(const void* data, std::size_t size)
{
    Outcome out;
    // As readChainFile reads a file's bytes.
    const auto parsed = parseChainBytes(data, size);
    if (!parsed.ok)
    {
        out.message = parsed.error;
        if (parsed.error.isEmpty())
            out.violation = "refused without an error message";
        return out;
    }
    out.accepted = true;
    if (const auto problem = chainProblem(parsed.chain); problem.isNotEmpty())
    {
        out.violation = "accepted chain: " + problem;
        return out;
    }
    // What Kerf writes it reads back: the same chain, and the same text again.
    const auto text = chainToJson(parsed.chain, parsed.name);
    const auto again = parseChainJson(text);
    if (!again.ok)
        out.violation = "written chain does not read back: " + again.error;
    else if (!sameChain(parsed.chain, again.chain) || again.name != parsed.name ||
             chainToJson(again.chain, again.name) != text)
        out.violation = "written chain reads back different";
    return out;
}

Outcome checkPluginState(KerfProcessor& processor, const void* data, std::size_t size)
{
    Outcome out;
    const int bytes = static_cast<int>(std::min<std::size_t>(size, 1u << 30));
    processor.setStateInformation(data, bytes);
    out.message = processor.lastStateProblem();
    out.accepted = out.message.isEmpty();
    for (auto* p : processor.getParameters())
    {
        const float v = p->getValue();
        if (!std::isfinite(v) || v < 0.0f || v > 1.0f)
        {
            out.violation = "parameter " + p->getName(64) + " holds " + juce::String(v);
            return out;
        }
        if (!out.accepted && v != p->getDefaultValue())
        {
            out.violation = "refused state left " + p->getName(64) + " off its default";
            return out;
        }
    }
    if (const auto problem = chainProblem(processor.exportChain()); problem.isNotEmpty())
    {
        out.violation = "restored chain: " + problem;
        return out;
    }
    // Saving what was restored and restoring it again changes nothing.
    std::vector<float> values;
    for (auto* p : processor.getParameters())
        values.push_back(p->getValue());
    const auto chain = processor.exportChain();
    juce::MemoryBlock saved;
    processor.getStateInformation(saved);
    processor.setStateInformation(saved.getData(), static_cast<int>(saved.getSize()));
    if (processor.lastStateProblem().isNotEmpty())
    {
        out.violation = "saved state does not restore: " + processor.lastStateProblem();
        return out;
    }
    const auto& params = processor.getParameters();
    for (int i = 0; i < params.size(); ++i)
        if (params[i]->getValue() != values[static_cast<std::size_t>(i)])
        {
            out.violation = "parameter " + params[i]->getName(64) + " changed from " +
                            juce::String(values[static_cast<std::size_t>(i)]) + " to " +
                            juce::String(params[i]->getValue()) + " through save and restore";
            return out;
        }
    if (!sameChain(chain, processor.exportChain()))
        out.violation = "chain changed through save and restore";
    return out;
}

Outcome checkAudioInput(const void* data, std::size_t size)
{
    Outcome out;
    juce::String error;
    auto input = cli::AudioInput::open(std::make_unique<juce::MemoryInputStream>(data, size, false),
                                       "fuzz input", error);
    if (input == nullptr)
    {
        out.message = error;
        if (error.isEmpty())
            out.violation = "refused without an error message";
        return out;
    }
    const auto& reader = input->reader();
    if (!std::isfinite(reader.sampleRate) || reader.sampleRate <= 0.0 || reader.numChannels < 1 ||
        reader.numChannels > static_cast<unsigned int>(cli::AudioInput::kMaxChannels) ||
        reader.lengthInSamples < 0)
    {
        out.violation = "opened with rate " + juce::String(reader.sampleRate) + ", channels " +
                        juce::String(reader.numChannels) + ", length " +
                        juce::String(reader.lengthInSamples);
        return out;
    }
    out.accepted = true;
    // As kerf render and echo-estimate read: blocks of 65536 frames over the length.
    constexpr int kBlock = 65536;
    juce::AudioBuffer<float> block(static_cast<int>(reader.numChannels), kBlock);
    const juce::int64 length = std::min<juce::int64>(reader.lengthInSamples, kMaxFuzzFrames);
    for (juce::int64 done = 0; done < length;)
    {
        const int n = static_cast<int>(std::min<juce::int64>(kBlock, length - done));
        if (!input->read(block, n, done))
        {
            out.message = "truncated or damaged";
            break;
        }
        done += n;
    }
    return out;
}

} // namespace kerf::fuzz
