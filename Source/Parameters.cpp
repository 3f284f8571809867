#include "Parameters.h"

#include "Limits.h"
#include "NumberText.h"

#include <cmath>
#include <vector>

namespace kerf
{

namespace
{
juce::String slotPrefix(int slot)
{
    return "sec" + juce::String(slot + 1).paddedLeft('0', 2);
}

/// Parses "2.5k", "1.2 kHz", "120 Hz", "-3 dB", "3db" and plain numbers.
float parseValueText(const juce::String& text)
{
    auto t = text.trim().toLowerCase().removeCharacters(" ");
    double scale = 1.0;
    for (const char* unit : {"hz", "db"})
        if (t.endsWith(unit))
            t = t.dropLastCharacters(2);
    if (t.endsWith("k"))
    {
        scale = 1000.0;
        t = t.dropLastCharacters(1);
    }
    return static_cast<float>(readNumber(t) * scale);
}

juce::String freqText(float v, int)
{
    return v >= 1000.0f ? juce::String(v / 1000.0f, v >= 10000.0f ? 1 : 2) + " kHz"
                        : juce::String(v, v >= 100.0f ? 0 : 1) + " Hz";
}

/// Rounds to `digits` significant digits. Parameter values live on this grid so that
/// saving and restoring (which passes through the normalised 0..1 value in float) gives
/// back exactly the same value: the round trip's error (about 1e-6 relative) is far below
/// half a grid step.
float snapSignificant(float value, int digits)
{
    if (value == 0.0f || !std::isfinite(value))
        return value;
    const double e = std::floor(std::log10(std::abs(static_cast<double>(value))));
    const double step = std::pow(10.0, e - digits + 1);
    return static_cast<float>(std::round(value / step) * step);
}

/// Log mapping (equal knob travel per octave) with values on a significant-digit grid.
juce::NormalisableRange<float> logRange(float lo, float hi, int digits)
{
    return {lo, hi,
            [](float start, float end, float norm) { return start * std::pow(end / start, norm); },
            [](float start, float end, float value)
            { return std::log(value / start) / std::log(end / start); },
            [digits](float start, float end, float value)
            { return juce::jlimit(start, end, snapSignificant(value, digits)); }};
}

/// Linear dB mapping with values on a 0.01 dB grid.
juce::NormalisableRange<float> dbRange(float lo, float hi)
{
    return {lo, hi, [](float start, float end, float norm) { return start + norm * (end - start); },
            [](float start, float end, float value) { return (value - start) / (end - start); },
            [](float start, float end, float value) {
                return juce::jlimit(start, end,
                                    static_cast<float>(std::round(value * 100.0) / 100.0));
            }};
}
} // namespace

namespace ids
{
juce::String slotOn(int slot)
{
    return slotPrefix(slot) + "_on";
}
juce::String slotFreq(int slot)
{
    return slotPrefix(slot) + "_freq";
}
juce::String slotGain(int slot)
{
    return slotPrefix(slot) + "_gain";
}
juce::String slotQ(int slot)
{
    return slotPrefix(slot) + "_q";
}
juce::String slotType(int slot)
{
    return slotPrefix(slot) + "_type";
}
juce::String slotSlope(int slot)
{
    return slotPrefix(slot) + "_slope";
}
juce::String slotOrder(int slot)
{
    return slotPrefix(slot) + "_order";
}
juce::String slotAlign(int slot)
{
    return slotPrefix(slot) + "_align";
}
juce::String slotChan(int slot)
{
    return slotPrefix(slot) + "_chan";
}
juce::String slotDesign(int slot)
{
    return slotPrefix(slot) + "_design";
}
juce::String echoDelay(int reflection)
{
    return "echo_r" + juce::String(reflection + 1) + "_delay";
}
juce::String echoGain(int reflection)
{
    return "echo_r" + juce::String(reflection + 1) + "_gain";
}
juce::String comb(int slot, const char* field)
{
    return "comb" + juce::String(slot + 1) + "_" + field;
}
} // namespace ids

double defaultSlotFreqHz(int slot)
{
    // 24 slots from 40 Hz to 16 kHz, log-evenly spaced, rounded to 3 significant digits.
    return snapSignificant(
        static_cast<float>(
            40.0 * std::pow(16000.0 / 40.0, slot / static_cast<double>(kNumSectionSlots - 1))),
        3);
}

juce::AudioProcessorValueTreeState::ParameterLayout createParameterLayout()
{
    using namespace dsp::limits;
    using juce::AudioParameterFloatAttributes;
    juce::AudioProcessorValueTreeState::ParameterLayout layout;

    const auto gainAttr =
        AudioParameterFloatAttributes()
            .withLabel("dB")
            .withStringFromValueFunction([](float v, int) { return juce::String(v, 1) + " dB"; })
            .withValueFromStringFunction(parseValueText);
    const auto freqAttr = AudioParameterFloatAttributes()
                              .withLabel("Hz")
                              .withStringFromValueFunction(freqText)
                              .withValueFromStringFunction(parseValueText);
    const auto qAttr =
        AudioParameterFloatAttributes()
            .withStringFromValueFunction([](float v, int) { return juce::String(v, 2); })
            .withValueFromStringFunction(parseValueText);

    for (int i = 0; i < kNumSectionSlots; ++i)
    {
        const juce::String name = "Section " + juce::String(i + 1);
        auto group =
            std::make_unique<juce::AudioProcessorParameterGroup>(slotPrefix(i), name, " | ");
        group->addChild(std::make_unique<juce::AudioParameterBool>(
            juce::ParameterID{ids::slotOn(i), kParameterVersion}, name + " on", false));
        group->addChild(std::make_unique<juce::AudioParameterChoice>(
            juce::ParameterID{ids::slotType(i), kParameterVersion}, name + " type",
            juce::StringArray{"Peaking", "Low shelf", "High shelf", "High-pass", "Low-pass",
                              "Notch", "Band-pass", "All-pass", "Tilt"},
            0));
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            juce::ParameterID{ids::slotFreq(i), kParameterVersion}, name + " frequency",
            logRange(static_cast<float>(kFreqMinHz), static_cast<float>(kFreqMaxHz), 5),
            static_cast<float>(defaultSlotFreqHz(i)), freqAttr));
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            juce::ParameterID{ids::slotGain(i), kParameterVersion}, name + " gain",
            dbRange(static_cast<float>(kGainMinDb), static_cast<float>(kGainMaxDb)), 0.0f,
            gainAttr));
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            juce::ParameterID{ids::slotQ(i), kParameterVersion}, name + " Q",
            logRange(static_cast<float>(kQMin), static_cast<float>(kQMax), 4), 1.0f, qAttr));
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            juce::ParameterID{ids::slotSlope(i), kParameterVersion}, name + " shelf slope",
            logRange(static_cast<float>(kSlopeMin), static_cast<float>(kSlopeMax), 3), 1.0f,
            qAttr));
        group->addChild(std::make_unique<juce::AudioParameterInt>(
            juce::ParameterID{ids::slotOrder(i), kParameterVersion}, name + " order", kPassOrderMin,
            kPassOrderMax, 2,
            juce::AudioParameterIntAttributes().withStringFromValueFunction(
                [](int v, int)
                { return juce::String(v) + " (" + juce::String(6 * v) + " dB/oct)"; })));
        group->addChild(std::make_unique<juce::AudioParameterChoice>(
            juce::ParameterID{ids::slotAlign(i), kParameterVersion}, name + " alignment",
            juce::StringArray{"Butterworth", "Linkwitz-Riley", "Resonant (order 2, uses Q)"}, 0));
        group->addChild(std::make_unique<juce::AudioParameterChoice>(
            juce::ParameterID{ids::slotChan(i), kParameterVersion}, name + " channels",
            juce::StringArray{"Both", "Left", "Right", "Mid", "Side"}, 0));
        group->addChild(std::make_unique<juce::AudioParameterChoice>(
            juce::ParameterID{ids::slotDesign(i), kParameterVersion}, name + " design",
            juce::StringArray{"Accurate", "Bilinear"}, 0));
        layout.add(std::move(group));
    }

    {
        auto echo =
            std::make_unique<juce::AudioProcessorParameterGroup>("echo", "Echo cancel", " | ");
        echo->addChild(std::make_unique<juce::AudioParameterBool>(
            juce::ParameterID{ids::echoOn, kParameterVersion}, "Echo cancel on", false));
        echo->addChild(std::make_unique<juce::AudioParameterChoice>(
            juce::ParameterID{ids::echoMethod, kParameterVersion}, "Echo cancel method",
            juce::StringArray{"Exact", "Series"}, 0));
        echo->addChild(std::make_unique<juce::AudioParameterInt>(
            juce::ParameterID{ids::echoTerms, kParameterVersion}, "Echo cancel series terms", 1,
            dsp::kMaxEchoSeriesTerms, 4));
        const auto msAttr =
            AudioParameterFloatAttributes()
                .withLabel("ms")
                .withStringFromValueFunction([](float v, int)
                                             { return juce::String(v, 2) + " ms"; })
                .withValueFromStringFunction(
                    [](const juce::String& t)
                    { return static_cast<float>(readNumber(t.trim().removeCharacters(" ms"))); });
        for (int k = 0; k < dsp::kMaxEchoReflections; ++k)
        {
            const juce::String name = "Echo reflection " + juce::String(k + 1);
            echo->addChild(std::make_unique<juce::AudioParameterFloat>(
                juce::ParameterID{ids::echoDelay(k), kParameterVersion}, name + " delay",
                logRange(static_cast<float>(dsp::kMinEchoDelayMs),
                         static_cast<float>(dsp::kMaxEchoDelayMs), 5),
                10.0f * static_cast<float>(k + 1), msAttr));
            echo->addChild(std::make_unique<juce::AudioParameterFloat>(
                juce::ParameterID{ids::echoGain(k), kParameterVersion}, name + " gain",
                juce::NormalisableRange<float>(-kPluginEchoGainMax, kPluginEchoGainMax, 0.0001f),
                0.0f));
        }
        layout.add(std::move(echo));
    }

    for (int c = 0; c < kNumCombSlots; ++c)
    {
        const juce::String name = "Comb " + juce::String(c + 1);
        auto group = std::make_unique<juce::AudioProcessorParameterGroup>(
            "comb" + juce::String(c + 1), name, " | ");
        auto id = [c](const char* f) {
            return juce::ParameterID{ids::comb(c, f), kParameterVersion};
        };
        group->addChild(std::make_unique<juce::AudioParameterBool>(id("on"), name + " on", false));
        group->addChild(std::make_unique<juce::AudioParameterChoice>(
            id("mode"), name + " mode", juce::StringArray{"Feedforward", "Feedback"}, 0));
        group->addChild(std::make_unique<juce::AudioParameterChoice>(
            id("tuning"), name + " tuning", juce::StringArray{"Delay", "Pitch"}, 0));
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            id("delay"), name + " delay",
            logRange(static_cast<float>(dsp::kCombMinDelayMs),
                     static_cast<float>(dsp::kCombMaxDelayMs), 5),
            5.0f,
            AudioParameterFloatAttributes().withLabel("ms").withStringFromValueFunction(
                [](float v, int) { return juce::String(v, 3) + " ms"; })));
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            id("pitch"), name + " pitch", logRange(20.0f, 5000.0f, 5), 220.0f, freqAttr));
        // The feedback limit (stability) is the end of the range, visible to the user.
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            id("gain"), name + " gain (limit +-0.995)",
            juce::NormalisableRange<float>(-static_cast<float>(dsp::kMaxFeedbackGain),
                                           static_cast<float>(dsp::kMaxFeedbackGain), 0.0001f),
            0.5f));
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            id("damp"), name + " damping (top = off)", logRange(200.0f, kCombDampingOffHz, 5),
            kCombDampingOffHz, freqAttr));
        group->addChild(std::make_unique<juce::AudioParameterFloat>(
            id("mix"), name + " dry/wet", juce::NormalisableRange<float>(0.0f, 1.0f, 0.0001f),
            1.0f));
        // How a new delay or pitch is taken: crossfade (no pitch sweep) or sweep.
        group->addChild(std::make_unique<juce::AudioParameterChoice>(
            juce::ParameterID{ids::comb(c, "change"), kParameterVersionSweep},
            name + " delay change", juce::StringArray{"Crossfade", "Sweep"}, 0));
        layout.add(std::move(group));
    }

    layout.add(std::make_unique<juce::AudioParameterFloat>(
        juce::ParameterID{ids::outputGain, kParameterVersion}, "Output gain",
        dbRange(-24.0f, 12.0f), 0.0f, gainAttr));
    layout.add(std::make_unique<juce::AudioParameterBool>(
        juce::ParameterID{ids::protectOn, kParameterVersion}, "Output protection", true));
    layout.add(std::make_unique<juce::AudioParameterFloat>(
        juce::ParameterID{ids::protectCeiling, kParameterVersion}, "Protection ceiling",
        dbRange(-24.0f, 0.0f), -1.0f, gainAttr));
    // Glide time on a 0.1 ms grid, more knob travel for short times (centre 60 ms).
    juce::NormalisableRange<float> glideRange(0.0f, static_cast<float>(dsp::kMaxGlideMs), 0.1f);
    glideRange.setSkewForCentre(60.0f);
    layout.add(std::make_unique<juce::AudioParameterFloat>(
        juce::ParameterID{ids::glideMs, kParameterVersionGlide}, "Glide time", glideRange,
        static_cast<float>(dsp::kDefaultGlideMs),
        AudioParameterFloatAttributes()
            .withLabel("ms")
            .withStringFromValueFunction([](float v, int) { return juce::String(v, 1) + " ms"; })
            .withValueFromStringFunction(
                [](const juce::String& t)
                { return static_cast<float>(readNumber(t.trim().removeCharacters(" ms"))); })));
    layout.add(std::make_unique<juce::AudioParameterBool>(
        juce::ParameterID{ids::bypass, kParameterVersionBypass}, "Bypass", false));
    return layout;
}

ParameterRefs::ParameterRefs(juce::AudioProcessorValueTreeState& state)
{
    for (int i = 0; i < kNumSectionSlots; ++i)
    {
        auto& s = slots[static_cast<std::size_t>(i)];
        s.on = state.getRawParameterValue(ids::slotOn(i));
        s.freq = state.getRawParameterValue(ids::slotFreq(i));
        s.gain = state.getRawParameterValue(ids::slotGain(i));
        s.q = state.getRawParameterValue(ids::slotQ(i));
        s.type = state.getRawParameterValue(ids::slotType(i));
        s.slope = state.getRawParameterValue(ids::slotSlope(i));
        s.order = state.getRawParameterValue(ids::slotOrder(i));
        s.align = state.getRawParameterValue(ids::slotAlign(i));
        s.chan = state.getRawParameterValue(ids::slotChan(i));
        s.design = state.getRawParameterValue(ids::slotDesign(i));
        jassert(s.on && s.freq && s.gain && s.q && s.type && s.slope && s.order && s.align &&
                s.chan && s.design);
    }
    outputGainDb = state.getRawParameterValue(ids::outputGain);
    protectOn = state.getRawParameterValue(ids::protectOn);
    protectCeilingDb = state.getRawParameterValue(ids::protectCeiling);
    glideMs = state.getRawParameterValue(ids::glideMs);
    bypass = state.getRawParameterValue(ids::bypass);
    for (int c = 0; c < kNumCombSlots; ++c)
    {
        auto& k = combs[static_cast<std::size_t>(c)];
        k.on = state.getRawParameterValue(ids::comb(c, "on"));
        k.mode = state.getRawParameterValue(ids::comb(c, "mode"));
        k.tuning = state.getRawParameterValue(ids::comb(c, "tuning"));
        k.delay = state.getRawParameterValue(ids::comb(c, "delay"));
        k.pitch = state.getRawParameterValue(ids::comb(c, "pitch"));
        k.gain = state.getRawParameterValue(ids::comb(c, "gain"));
        k.damp = state.getRawParameterValue(ids::comb(c, "damp"));
        k.mix = state.getRawParameterValue(ids::comb(c, "mix"));
        k.change = state.getRawParameterValue(ids::comb(c, "change"));
    }
    echoOn = state.getRawParameterValue(ids::echoOn);
    echoMethod = state.getRawParameterValue(ids::echoMethod);
    echoTerms = state.getRawParameterValue(ids::echoTerms);
    for (int k = 0; k < dsp::kMaxEchoReflections; ++k)
    {
        echoDelayMs[static_cast<std::size_t>(k)] = state.getRawParameterValue(ids::echoDelay(k));
        echoGain[static_cast<std::size_t>(k)] = state.getRawParameterValue(ids::echoGain(k));
    }
    for (auto* p : state.processor.getParameters())
        if (auto* ranged = dynamic_cast<juce::RangedAudioParameter*>(p))
            all.push_back(state.getRawParameterValue(ranged->paramID));
}

void ParameterRefs::readAll(float* out) const noexcept
{
    for (std::size_t i = 0; i < all.size(); ++i)
        out[i] = all[i]->load(std::memory_order_relaxed);
}

namespace
{
int choiceIndex(const std::atomic<float>* p, int count) noexcept
{
    return juce::jlimit(0, count - 1,
                        static_cast<int>(std::lround(p->load(std::memory_order_relaxed))));
}
} // namespace

void ParameterRefs::readChain(dsp::ChainSpec& out) const noexcept
{
    using T = dsp::StageType;
    out.numStages = kNumSectionSlots + 1 + kNumCombSlots;
    for (int c = 0; c < kNumCombSlots; ++c)
    {
        const auto& k = combs[static_cast<std::size_t>(c)];
        auto& st = out.stages[static_cast<std::size_t>(kNumSectionSlots + 1 + c)];
        st = dsp::StageSpec{};
        st.type = T::comb;
        st.enabled = k.on->load(std::memory_order_relaxed) > 0.5f;
        st.comb.mode =
            choiceIndex(k.mode, 2) == 0 ? dsp::CombMode::feedforward : dsp::CombMode::feedback;
        st.comb.delayMs = k.delay->load(std::memory_order_relaxed);
        st.comb.pitchHz =
            choiceIndex(k.tuning, 2) == 1 ? k.pitch->load(std::memory_order_relaxed) : 0.0;
        st.comb.gain = k.gain->load(std::memory_order_relaxed);
        const float damp = k.damp->load(std::memory_order_relaxed);
        st.comb.dampingHz = damp >= kCombDampingOffHz ? 0.0 : damp;
        st.comb.mix = k.mix->load(std::memory_order_relaxed);
        st.comb.sweepDelay = choiceIndex(k.change, 2) == 1;
    }
    {
        // Stage 0: the echo canceller, with the reflections whose gain is not zero.
        auto& echo = out.stages[0];
        echo = dsp::StageSpec{};
        echo.type = T::echoCancel;
        echo.echo.method =
            choiceIndex(echoMethod, 2) == 0 ? dsp::EchoMethod::exact : dsp::EchoMethod::series;
        echo.echo.terms = juce::jlimit(1, dsp::kMaxEchoSeriesTerms,
                                       static_cast<int>(std::lround(echoTerms->load())));
        int n = 0;
        for (int k = 0; k < dsp::kMaxEchoReflections; ++k)
        {
            const float g = echoGain[static_cast<std::size_t>(k)]->load(std::memory_order_relaxed);
            if (g == 0.0f)
                continue;
            echo.echo.reflections[static_cast<std::size_t>(n++)] = {
                echoDelayMs[static_cast<std::size_t>(k)]->load(std::memory_order_relaxed), g};
        }
        echo.echo.numReflections = n;
        echo.enabled = echoOn->load(std::memory_order_relaxed) > 0.5f && n > 0;
    }
    for (int i = 0; i < kNumSectionSlots; ++i)
    {
        const auto& s = slots[static_cast<std::size_t>(i)];
        auto& st = out.stages[static_cast<std::size_t>(i + 1)];
        st.type = static_cast<T>(choiceIndex(s.type, dsp::kNumSectionTypes));
        st.enabled = s.on->load(std::memory_order_relaxed) > 0.5f;
        st.freqHz = s.freq->load(std::memory_order_relaxed);
        st.gainDb = s.gain->load(std::memory_order_relaxed);
        st.q = s.q->load(std::memory_order_relaxed);
        st.slope = s.slope->load(std::memory_order_relaxed);
        st.order = choiceIndex(s.order, 9);
        st.channels = static_cast<dsp::ChannelMode>(choiceIndex(s.chan, dsp::kNumChannelModes));
        st.design = static_cast<dsp::DesignMode>(choiceIndex(s.design, 2));
        st.alignment = dsp::PassAlignment::butterworth;
        if (st.type == T::highPass || st.type == T::lowPass)
        {
            const auto align = static_cast<SlotAlignment>(choiceIndex(s.align, 3));
            if (align == SlotAlignment::linkwitzRiley)
                st.alignment = dsp::PassAlignment::linkwitzRiley;
            // The slot's Q shapes the corner only in resonant mode (order 2); otherwise the
            // alignment's own Q.
            if (!(align == SlotAlignment::resonant && st.order == 2))
                st.q = 0.0;
        }
        else if (st.type == T::allPass)
            st.order = juce::jlimit(1, 2, st.order);
    }
}

bool applyChainToParameters(const dsp::ChainSpec& chain, juce::AudioProcessorValueTreeState& state,
                            juce::String& error)
{
    using T = dsp::StageType;
    // Split the chain: one causal echo stage, then the sections in order.
    const dsp::StageSpec* echo = nullptr;
    std::vector<dsp::StageSpec> sections, combs;
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        if (s.type == T::comb)
        {
            combs.push_back(s);
            continue;
        }
        if (s.type != T::echoCancel)
        {
            sections.push_back(s);
            continue;
        }
        if (echo != nullptr)
        {
            error = "the plugin has one echo-cancellation stage; the chain has more";
            return false;
        }
        if (s.nonCausal)
        {
            error = "stage " + juce::String(i) +
                    " is non_causal: it runs backwards in time, only in kerf render";
            return false;
        }
        for (int k = 0; k < s.echo.numReflections; ++k)
            if (std::abs(s.echo.reflections[static_cast<std::size_t>(k)].gain) > kPluginEchoGainMax)
            {
                error = "stage " + juce::String(i) + ": a reflection gain above " +
                        juce::String(kPluginEchoGainMax) +
                        " has no stable live inverse; use kerf render with non_causal";
                return false;
            }
        echo = &s;
    }
    if (static_cast<int>(sections.size()) > kNumSectionSlots)
    {
        error = "the chain has " + juce::String(static_cast<int>(sections.size())) +
                " section stages; the plugin has " + juce::String(kNumSectionSlots) + " slots";
        return false;
    }
    if (static_cast<int>(combs.size()) > kNumCombSlots)
    {
        error = "the chain has " + juce::String(static_cast<int>(combs.size())) +
                " comb stages; the plugin has " + juce::String(kNumCombSlots) + " comb slots";
        return false;
    }
    auto set = [&state](const juce::String& id, float value)
    {
        auto* p = state.getParameter(id);
        p->setValueNotifyingHost(p->convertTo0to1(value));
    };
    for (int c = 0; c < kNumCombSlots; ++c)
    {
        const bool used = c < static_cast<int>(combs.size());
        const dsp::StageSpec st = used ? combs[static_cast<std::size_t>(c)] : dsp::StageSpec{};
        const dsp::CombSettings k = used ? st.comb : dsp::CombSettings{};
        set(ids::comb(c, "on"), used && st.enabled ? 1.0f : 0.0f);
        set(ids::comb(c, "mode"), k.mode == dsp::CombMode::feedback ? 1.0f : 0.0f);
        set(ids::comb(c, "tuning"), k.pitchHz > 0.0 ? 1.0f : 0.0f);
        set(ids::comb(c, "delay"), static_cast<float>(k.pitchHz > 0.0 ? 5.0 : k.delayMs));
        set(ids::comb(c, "pitch"), static_cast<float>(k.pitchHz > 0.0 ? k.pitchHz : 220.0));
        set(ids::comb(c, "gain"), static_cast<float>(k.gain));
        set(ids::comb(c, "damp"),
            k.dampingHz > 0.0 ? static_cast<float>(k.dampingHz) : kCombDampingOffHz);
        set(ids::comb(c, "mix"), static_cast<float>(k.mix));
        set(ids::comb(c, "change"), k.sweepDelay ? 1.0f : 0.0f);
    }
    set(ids::echoOn, echo != nullptr && echo->enabled ? 1.0f : 0.0f);
    set(ids::echoMethod,
        echo != nullptr && echo->echo.method == dsp::EchoMethod::series ? 1.0f : 0.0f);
    set(ids::echoTerms, static_cast<float>(echo != nullptr ? echo->echo.terms : 4));
    for (int k = 0; k < dsp::kMaxEchoReflections; ++k)
    {
        const bool used = echo != nullptr && k < echo->echo.numReflections;
        const auto& r =
            used ? echo->echo.reflections[static_cast<std::size_t>(k)] : dsp::EchoReflection{};
        set(ids::echoDelay(k),
            used ? static_cast<float>(r.delayMs) : 10.0f * static_cast<float>(k + 1));
        set(ids::echoGain(k), used ? static_cast<float>(r.gain) : 0.0f);
    }
    for (int i = 0; i < kNumSectionSlots; ++i)
    {
        dsp::StageSpec s;
        if (i < static_cast<int>(sections.size()))
            s = sections[static_cast<std::size_t>(i)];
        else
        {
            s.enabled = false;
            s.freqHz = defaultSlotFreqHz(i);
        }
        const bool passType = s.type == T::highPass || s.type == T::lowPass;
        SlotAlignment align = s.alignment == dsp::PassAlignment::linkwitzRiley
                                  ? SlotAlignment::linkwitzRiley
                                  : SlotAlignment::butterworth;
        float q = static_cast<float>(s.q);
        if (passType)
        {
            if (s.q > 0.0 && s.order == 2)
                align = SlotAlignment::resonant;
            else
                q = 1.0f;
        }
        set(ids::slotOn(i), s.enabled ? 1.0f : 0.0f);
        set(ids::slotType(i), static_cast<float>(static_cast<int>(s.type)));
        set(ids::slotFreq(i), static_cast<float>(s.freqHz));
        set(ids::slotGain(i), static_cast<float>(s.gainDb));
        set(ids::slotQ(i), q);
        set(ids::slotSlope(i), static_cast<float>(s.slope));
        set(ids::slotOrder(i), static_cast<float>(s.order));
        set(ids::slotAlign(i), static_cast<float>(static_cast<int>(align)));
        set(ids::slotChan(i), static_cast<float>(static_cast<int>(s.channels)));
        set(ids::slotDesign(i), static_cast<float>(static_cast<int>(s.design)));
    }
    return true;
}

dsp::ChainSpec chainFromParameters(const juce::AudioProcessorValueTreeState& state)
{
    // ParameterRefs only reads through the pointers it looks up.
    return chainFromParameters(
        ParameterRefs(const_cast<juce::AudioProcessorValueTreeState&>(state)));
}

dsp::ChainSpec chainFromParameters(const ParameterRefs& refs)
{
    dsp::ChainSpec all, chain;
    refs.readChain(all);
    for (int i = 0; i < all.numStages; ++i)
        if (all.stages[static_cast<std::size_t>(i)].enabled)
            chain.push(all.stages[static_cast<std::size_t>(i)]);
    return chain;
}

} // namespace kerf
