#include "PluginProcessor.h"

#include "FactoryPresets.h"
#include "KerfEditor.h"
#include "NumberText.h"
#include "Response/SystemFunction.h"
#include "StrictXml.h"

#include <bit>
#include <cstdint>
#include <cstring>

namespace kerf
{

namespace
{
const juce::Identifier kStateTag{"KerfState"};
const juce::Identifier kStateVersionAttr{"stateVersion"};
const juce::Identifier kSlotsTag{"CompareSlots"};
const juce::Identifier kSlotTag{"Slot"};
const juce::Identifier kActiveAttr{"active"};
const juce::Identifier kSlotNameAttr{"name"};
// The editor's size and analyzer switch: one optional child of the state (older Kerf ignores
// it; a state without it opens the editor at its default size with the analyzer off).
const juce::Identifier kEditorTag{"EditorView"};
const juce::Identifier kEditorWidthAttr{"width"};
const juce::Identifier kEditorHeightAttr{"height"};
const juce::Identifier kEditorAnalyzerAttr{"analyzer"};
/// Largest editor side a state may carry (the editor's own limits apply on top).
constexpr int kEditorSideMax = 16384;

constexpr juce::uint32 kXmlMagic = 0x21324356; // "VC2!", AudioProcessor::copyXmlToBinary

/// Whether the XML text of a saved state (JUCE's binary wrapping: "VC2!", a 32-bit length,
/// the text) is well-formed UTF-8 with nothing after its terminating NUL, or is no such
/// wrapping at all (JUCE refuses that itself). JUCE 7.0.5 steps over the continuation bytes
/// a lead byte announces without looking for the end of the text
/// (CharPointer_UTF8::operator++), so malformed UTF-8 near the end made its XML reader read
/// past the buffer (AddressSanitizer, found by fuzzing: Tests/fuzz/regressions/plugin_state).
bool stateTextIsSafe(const void* data, int size)
{
    if (size <= 8 || juce::ByteOrder::littleEndianInt(data) != kXmlMagic)
        return true;
    const auto* text = static_cast<const char*>(data) + 8;
    const int claimed = static_cast<int>(juce::ByteOrder::littleEndianInt(text - 4));
    const int length = juce::jmin(size - 8, claimed);
    if (length <= 0)
        return true;
    const auto* end = static_cast<const char*>(std::memchr(text, 0, static_cast<size_t>(length)));
    const int textLength = end != nullptr ? static_cast<int>(end - text) : length;
    for (int i = textLength; i < length; ++i)
        if (text[i] != 0)
            return false; // more text after the NUL: JUCE's reader would go on into it
    return juce::CharPointer_UTF8::isValidString(text, textLength);
}

/// Why the XML text of a saved state is not of the plain form Kerf writes (StrictXml.h),
/// or nothing: JUCE's reader recurses once per level of nesting and loops for good on some
/// lenient texts, so only plain XML reaches it. Where the wrapping is not JUCE's, JUCE reads
/// nothing (and the state is refused as not Kerf's).
std::string stateXmlProblem(const void* data, int size)
{
    if (size <= 8 || juce::ByteOrder::littleEndianInt(data) != kXmlMagic)
        return {};
    const auto* text = static_cast<const char*>(data) + 8;
    const int claimed = static_cast<int>(juce::ByteOrder::littleEndianInt(text - 4));
    const int length = juce::jmin(size - 8, claimed);
    return length > 0 ? plainXmlProblem(text, static_cast<std::size_t>(length)) : std::string();
}

/// Names the first attribute of `root` (or of any element inside it) that JUCE cannot read
/// as a number without overflowing (NumberText.h), or nothing. Walked without recursion,
/// however deep the nesting.
juce::String overflowingNumberAttribute(const juce::XmlElement& root)
{
    std::vector<const juce::XmlElement*> pending{&root};
    while (!pending.empty())
    {
        const auto* e = pending.back();
        pending.pop_back();
        for (int i = 0; i < e->getNumAttributes(); ++i)
            if (overflowsJuceNumberReader(e->getAttributeValue(i)))
                return e->getTagName() + "." + e->getAttributeName(i);
        for (const auto* child : e->getChildIterator())
            pending.push_back(child);
    }
    return {};
}
} // namespace

KerfProcessor::KerfProcessor()
    : AudioProcessor(BusesProperties()
                         .withInput("Input", juce::AudioChannelSet::stereo(), true)
                         .withOutput("Output", juce::AudioChannelSet::stereo(), true)),
      parameters(*this, nullptr, kStateTag, createParameterLayout()), refs(parameters),
      readValues(refs.all.size(), 0.0f)
{
    // The host's bypass switch is no edit of the settings: not in undo, A/B or presets.
    edits.ignore(parameters.getParameter(ids::bypass)->getParameterIndex());
}

bool KerfProcessor::isBusesLayoutSupported(const BusesLayout& layouts) const
{
    const auto& out = layouts.getMainOutputChannelSet();
    if (out != juce::AudioChannelSet::mono() && out != juce::AudioChannelSet::stereo())
        return false;
    return layouts.getMainInputChannelSet() == out;
}

void KerfProcessor::prepareToPlay(double sampleRate, int samplesPerBlock)
{
    chain.prepare(sampleRate, samplesPerBlock, juce::jmax(getTotalNumOutputChannels(), 1));
    capture.prepare(sampleRate);
    refs.readAll(readValues.data());
    refs.readChain(snapshot);
    chain.setGlideMs(static_cast<double>(refs.glideMs->load()));
    chain.setChain(snapshot);
    lastOutputGain = juce::Decibels::decibelsToGain(refs.outputGainDb->load(), -120.0f);
    // The bypass crossfade's copy of the input (blocks longer than this are split).
    dryCopy.setSize(juce::jmax(2, getTotalNumInputChannels(), getTotalNumOutputChannels()),
                    juce::jmax(1, samplesPerBlock));
    wetAmount = refs.bypass->load() > 0.5f ? 0.0 : 1.0;
    analyzerIn.assign(static_cast<std::size_t>(dryCopy.getNumSamples()), 0.0f);
    analyzerOut.assign(static_cast<std::size_t>(dryCopy.getNumSamples()), 0.0f);
    analyzerRate.store(sampleRate, std::memory_order_relaxed);
    setLatencySamples(0);
}

template <typename Sample> void KerfProcessor::processAny(juce::AudioBuffer<Sample>& buffer)
{
    // The bypass crossfade copies the input first: blocks longer than the copy prepared in
    // prepareToPlay (hosts rarely send them) are processed in pieces, without allocating
    // (an AudioBuffer that refers to existing channels keeps their pointers in place).
    const int most = dryCopy.getNumSamples();
    if (most > 0 && buffer.getNumSamples() > most)
    {
        for (int start = 0; start < buffer.getNumSamples(); start += most)
        {
            juce::AudioBuffer<Sample> piece(buffer.getArrayOfWritePointers(),
                                            buffer.getNumChannels(), start,
                                            juce::jmin(most, buffer.getNumSamples() - start));
            processPiece(piece);
        }
        return;
    }
    processPiece(buffer);
}

template <typename Sample> void KerfProcessor::processPiece(juce::AudioBuffer<Sample>& buffer)
{
    juce::ScopedNoDenormals noDenormals;
    const int numSamples = buffer.getNumSamples();
    const int numChannels = buffer.getNumChannels();
    for (int ch = getTotalNumInputChannels(); ch < numChannels; ++ch)
        buffer.clear(ch, 0, numSamples);
    // Input that is not a number (NaN, infinities) counts as silence everywhere: in the
    // chain, in the bypassed signal and in what the echo estimate hears.
    bool nonFiniteInput = false;
    for (int ch = 0; ch < numChannels; ++ch)
        nonFiniteInput =
            dsp::silenceNonFinite(buffer.getWritePointer(ch), numSamples) || nonFiniteInput;
    if (nonFiniteInput)
        nonFiniteBlocks.fetch_add(1, std::memory_order_relaxed);

    // The echo estimate listens to the input as it arrives, before any processing.
    capture.push(buffer.getArrayOfReadPointers(), getTotalNumInputChannels(), numSamples);
    // The live analyzer (when an editor has it on) sees the same input and, at the end, the
    // output; pieces never exceed the prepared length (processAny splits longer blocks).
    const bool feedAnalyzer = analyzerFeed.load(std::memory_order_relaxed);
    if (feedAnalyzer)
        monoSum(buffer, juce::jmin(numChannels, getTotalNumInputChannels()), analyzerIn.data(),
                juce::jmin(numSamples, static_cast<int>(analyzerIn.size())));

    // Bypass: the chain keeps running (its memories stay current, so coming back is smooth)
    // and the output crossfades between the processed and the untouched input.
    const double wetTarget = refs.bypass->load() > 0.5f ? 0.0 : 1.0;
    const int dryChannels = juce::jmin(numChannels, dryCopy.getNumChannels());
    const bool crossfade = (wetAmount != 1.0 || wetTarget != 1.0) &&
                           numSamples <= dryCopy.getNumSamples() && dryChannels > 0;
    if (crossfade)
        for (int ch = 0; ch < dryChannels; ++ch)
        {
            const Sample* in = buffer.getReadPointer(ch);
            double* dry = dryCopy.getWritePointer(ch);
            for (int i = 0; i < numSamples; ++i)
                dry[i] = static_cast<double>(in[i]);
        }

    // The parameters are looked at at the start of the call and again every
    // kUpdateIntervalSamples samples: a change takes effect at the chain's next update
    // point, and the chain glides or crossfades to it (Dsp/Smoothing). JUCE 7.0.5's
    // wrappers apply host changes at block start; in the VST3 plugin, automation points
    // inside a block arrive as calls that start where they lie (Vst3Automation.h). Preset
    // loads and state restores arrive as parameter changes and move the same way. The
    // chain is read and handed over only where a value changed (reading it and comparing
    // every stage at every point took 40 % of a still block), and the samples between
    // changes run as one piece: the chain's output does not depend on how its input is
    // split.
    chain.setGlideMs(static_cast<double>(refs.glideMs->load()));
    Sample* const* io = buffer.getArrayOfWritePointers();
    const int pieceChannels = juce::jmin(numChannels, dsp::ChainProcessor::kMaxChannels);
    auto run = [&](int from, int to)
    {
        Sample* piece[dsp::ChainProcessor::kMaxChannels];
        for (int ch = 0; ch < pieceChannels; ++ch)
            piece[ch] = io[ch] + from;
        chain.process(piece, pieceChannels, to - from);
    };
    int from = 0;
    for (int start = 0; start < numSamples; start += dsp::kUpdateIntervalSamples)
    {
        if (!parametersMoved())
            continue;
        if (start > from)
            run(from, start);
        from = start;
        refs.readChain(snapshot);
        chain.setChain(snapshot);
    }
    run(from, numSamples);

    // Output gain ramps across the block so that a change does not click.
    const double target =
        juce::Decibels::decibelsToGain(static_cast<double>(refs.outputGainDb->load()), -120.0);
    if (target != lastOutputGain || target != 1.0)
        for (int ch = 0; ch < numChannels; ++ch)
            buffer.applyGainRamp(ch, 0, numSamples, static_cast<Sample>(lastOutputGain),
                                 static_cast<Sample>(target));
    lastOutputGain = target;

    if (refs.protectOn->load() > 0.5f)
    {
        protection.setCeilingDb(refs.protectCeilingDb->load());
        protection.process(buffer.getArrayOfWritePointers(), numChannels, numSamples);
    }

    if (crossfade)
        applyBypassCrossfade(buffer, dryChannels, wetTarget);

    if (feedAnalyzer)
    {
        const int fed = juce::jmin(numSamples, static_cast<int>(analyzerOut.size()));
        monoSum(buffer, juce::jmin(numChannels, getTotalNumOutputChannels()), analyzerOut.data(),
                fed);
        analyzerQueue.push(analyzerIn.data(), analyzerOut.data(), fed);
        if (fed < numSamples) // only before prepareToPlay: nothing to copy into
            analyzerQueue.countDropped(numSamples - fed);
    }
}

int32_t KerfProcessor::queryIAudioProcessor(const Steinberg::TUID iid, void** obj)
{
    // Made at the first query the VST3 wrapper passes on, once its component is this
    // processor's play head (it is from its construction on).
    std::call_once(
        automationSplitterMade, [this]
        { automationSplitter = makeVst3AutomationSplitter(getPlayHead(), getParameters()); });
    return queryVst3AutomationSplitter(automationSplitter.get(), iid, obj);
}

bool KerfProcessor::parametersMoved() noexcept
{
    // Every value against the one the snapshot was read after, bit for bit, in one pass
    // without branches; only on a difference are they copied (before the chain is read, so
    // a change that lands in between is seen at the next point).
    std::uint32_t differ = 0;
    const auto& all = refs.all;
    for (std::size_t i = 0; i < all.size(); ++i)
        differ |= std::bit_cast<std::uint32_t>(all[i]->load(std::memory_order_relaxed)) ^
                  std::bit_cast<std::uint32_t>(readValues[i]);
    if (differ == 0)
        return false;
    refs.readAll(readValues.data());
    return true;
}

template <typename Sample>
void KerfProcessor::monoSum(const juce::AudioBuffer<Sample>& buffer, int channels, float* out,
                            int numSamples) noexcept
{
    // The mean of the channels: a full-scale sine on every channel stays full scale.
    const double scale = channels > 0 ? 1.0 / channels : 0.0;
    for (int i = 0; i < numSamples; ++i)
    {
        double sum = 0.0;
        for (int ch = 0; ch < channels; ++ch)
            sum += static_cast<double>(buffer.getReadPointer(ch)[i]);
        out[i] = static_cast<float>(sum * scale);
    }
}

template <typename Sample>
void KerfProcessor::applyBypassCrossfade(juce::AudioBuffer<Sample>& buffer, int dryChannels,
                                         double wetTarget) noexcept
{
    // The crossfade takes the glide time (at least the shortest clean move), its position
    // moving linearly and its gain along a raised cosine, so the gain's slope is zero at
    // both ends (common practice for click-free fades). At the ends the output is exactly
    // the processed signal, or exactly the input.
    const double rate = getSampleRate() > 0.0 ? getSampleRate() : 48000.0;
    const double fadeMs =
        juce::jmax(dsp::kMinTransitionMs, static_cast<double>(refs.glideMs->load()));
    const double step = 1000.0 / (fadeMs * rate);
    const int numSamples = buffer.getNumSamples();
    const double start = wetAmount;
    for (int ch = 0; ch < buffer.getNumChannels(); ++ch)
    {
        Sample* out = buffer.getWritePointer(ch);
        const double* dry = ch < dryChannels ? dryCopy.getReadPointer(ch) : nullptr;
        double w = start;
        for (int i = 0; i < numSamples; ++i)
        {
            w = wetTarget > w ? juce::jmin(wetTarget, w + step) : juce::jmax(wetTarget, w - step);
            const double dryValue = dry != nullptr ? dry[i] : 0.0;
            if (w <= 0.0)
                out[i] = static_cast<Sample>(dryValue);
            else if (w < 1.0)
            {
                const double g = 0.5 - 0.5 * std::cos(juce::MathConstants<double>::pi * w);
                out[i] =
                    static_cast<Sample>(dryValue + g * (static_cast<double>(out[i]) - dryValue));
            }
        }
        if (ch + 1 == buffer.getNumChannels())
            wetAmount = w;
    }
}

void KerfProcessor::processBlock(juce::AudioBuffer<float>& buffer, juce::MidiBuffer&)
{
    processAny(buffer);
}

void KerfProcessor::processBlock(juce::AudioBuffer<double>& buffer, juce::MidiBuffer&)
{
    processAny(buffer);
}

juce::AudioProcessorParameter* KerfProcessor::getBypassParameter() const
{
    return parameters.getParameter(ids::bypass);
}

juce::AudioProcessorEditor* KerfProcessor::createEditor()
{
    return new KerfEditor(*this);
}

int KerfProcessor::getNumPrograms()
{
    return factoryPresets().size() + 1;
}

const juce::String KerfProcessor::getProgramName(int index)
{
    if (index == 0)
        return "Flat";
    const auto& presets = factoryPresets();
    return juce::isPositiveAndBelow(index - 1, presets.size()) ? presets[index - 1].name
                                                               : juce::String();
}

void KerfProcessor::setCurrentProgram(int index)
{
    const auto& presets = factoryPresets();
    if (!juce::isPositiveAndBelow(index, presets.size() + 1))
        return;
    // Undo and redo of a program load also put the host's program number back.
    const int before = currentProgram;
    auto setProgram = [this](int program)
    {
        currentProgram = program;
        updateHostDisplay(ChangeDetails().withProgramChanged(true));
    };
    currentProgram = index;
    loadChain(
        index == 0 ? dsp::ChainSpec{} : presets[index - 1].chain,
        "Load preset " + getProgramName(index), [setProgram, before] { setProgram(before); },
        [setProgram, index] { setProgram(index); });
}

juce::String KerfProcessor::importChain(const dsp::ChainSpec& newChain,
                                        const juce::String& stepName)
{
    return loadChain(newChain, stepName, {}, {});
}

juce::String KerfProcessor::loadChain(const dsp::ChainSpec& newChain, const juce::String& stepName,
                                      std::function<void()> undoExtra,
                                      std::function<void()> redoExtra)
{
    juce::String error;
    auto load = [&] { applyChainToParameters(newChain, parameters, error); };
    // An edit on the message thread is an undo step; a host thread (some hosts change
    // programs from one) changes the parameters without touching the history.
    if (juce::MessageManager::existsAndIsCurrentThread())
        edits.perform(stepName, load, std::move(undoExtra), std::move(redoExtra));
    else
        load();
    return error;
}

juce::String KerfProcessor::importChainFile(const juce::File& file)
{
    const auto parsed = readChainFile(file);
    if (!parsed.ok)
        return parsed.error;
    return importChain(parsed.chain, "Import " + file.getFileName());
}

juce::String KerfProcessor::exportChainFile(const juce::File& file, const juce::String& name) const
{
    if (file.isDirectory())
        return file.getFullPathName() + " is a folder";
    juce::TemporaryFile temp(file);
    if (!temp.getFile().replaceWithText(chainToJson(exportChain(), name)))
        return "cannot write " + temp.getFile().getFullPathName();
    if (!temp.overwriteTargetFileWithTemporary())
        return "cannot write " + file.getFullPathName();
    return {};
}

juce::String KerfProcessor::saveUserPreset(const juce::String& name) const
{
    return presetFolder.save(name, exportChain());
}

juce::String KerfProcessor::loadUserPreset(const juce::String& name)
{
    const auto parsed = presetFolder.load(name);
    if (!parsed.ok)
        return parsed.error;
    return importChain(parsed.chain, "Load preset " + name);
}

juce::String KerfProcessor::deleteUserPreset(const juce::String& name)
{
    return presetFolder.remove(name);
}

bool KerfProcessor::slotHolds(CompareSlot slot) const noexcept
{
    return slots[static_cast<int>(slot)].has_value();
}

void KerfProcessor::storeSlot(CompareSlot slot)
{
    auto values = edits.capture();
    const juce::ScopedLock lock(slotLock);
    slots[static_cast<int>(slot)] = std::move(values);
}

void KerfProcessor::setActive(CompareSlot slot)
{
    const juce::ScopedLock lock(slotLock);
    active = slot;
}

void KerfProcessor::setSlots(std::optional<EditHistory::Values> a,
                             std::optional<EditHistory::Values> b, CompareSlot activeSlot)
{
    const juce::ScopedLock lock(slotLock);
    slots[0] = std::move(a);
    slots[1] = std::move(b);
    active = activeSlot;
}

bool KerfProcessor::recallSlot(CompareSlot slot)
{
    const auto& held = slots[static_cast<int>(slot)];
    if (!held)
        return false;
    const auto before = active;
    edits.perform(
        juce::String("Recall ") + (slot == CompareSlot::a ? "A" : "B"), [&] { edits.apply(*held); },
        [this, before] { setActive(before); }, [this, slot] { setActive(slot); });
    setActive(slot);
    return true;
}

void KerfProcessor::switchSlot()
{
    const auto other = active == CompareSlot::a ? CompareSlot::b : CompareSlot::a;
    const auto beforeActive = active;
    const auto beforeA = slots[0], beforeB = slots[1];
    storeSlot(active);
    if (!slots[static_cast<int>(other)])
        storeSlot(other);
    const auto afterA = slots[0], afterB = slots[1];
    edits.perform(
        juce::String("Switch to ") + (other == CompareSlot::a ? "A" : "B"),
        [&] { edits.apply(*slots[static_cast<int>(other)]); },
        [this, beforeActive, beforeA, beforeB] { setSlots(beforeA, beforeB, beforeActive); },
        [this, other, afterA, afterB] { setSlots(afterA, afterB, other); });
    setActive(other);
}

namespace
{
/// Every "on" parameter of a stage: the section slots, the combs, the echo stage.
juce::StringArray stageSwitchIds()
{
    juce::StringArray list;
    for (int i = 0; i < kNumSectionSlots; ++i)
        list.add(ids::slotOn(i));
    for (int c = 0; c < kNumCombSlots; ++c)
        list.add(ids::comb(c, "on"));
    list.add(ids::echoOn);
    return list;
}
} // namespace

void KerfProcessor::setAllFlat()
{
    edits.perform("All flat",
                  [this]
                  {
                      for (const auto& id : stageSwitchIds())
                          if (auto* p = parameters.getParameter(id); p->getValue() != 0.0f)
                              p->setValueNotifyingHost(0.0f);
                  });
}

bool KerfProcessor::isAllFlat() const
{
    for (const auto& id : stageSwitchIds())
        if (parameters.getRawParameterValue(id)->load() > 0.5f)
            return false;
    return true;
}

double KerfProcessor::getTailLengthSeconds() const
{
    const double rate = getSampleRate() > 0.0 ? getSampleRate() : 48000.0;
    return dsp::chainTailSeconds(exportChain(), rate);
}

dsp::ChainSpec KerfProcessor::exportChain() const
{
    return chainFromParameters(refs);
}

void KerfProcessor::applyEchoEstimate(const dsp::EchoEstimate& estimate)
{
    auto set = [this](const juce::String& id, float value)
    {
        auto* p = parameters.getParameter(id);
        p->setValueNotifyingHost(p->convertTo0to1(value));
    };
    edits.perform("Apply echo fix",
                  [&]
                  {
                      for (int k = 0; k < dsp::kMaxEchoReflections; ++k)
                      {
                          const bool found = k < static_cast<int>(estimate.reflections.size());
                          const auto* r =
                              found ? &estimate.reflections[static_cast<std::size_t>(k)] : nullptr;
                          set(ids::echoDelay(k), found ? static_cast<float>(r->delayMs)
                                                       : 10.0f * static_cast<float>(k + 1));
                          set(ids::echoGain(k),
                              found ? juce::jlimit(-kPluginEchoGainMax, kPluginEchoGainMax,
                                                   static_cast<float>(r->gain))
                                    : 0.0f);
                      }
                      set(ids::echoMethod, 0.0f);
                      set(ids::echoOn, estimate.reflections.empty() ? 0.0f : 1.0f);
                  });
}

void KerfProcessor::getStateInformation(juce::MemoryBlock& destData)
{
    auto tree = parameters.copyState();
    tree.setProperty(kStateVersionAttr, kStateVersion, nullptr);
    auto xml = tree.createXml();
    if (xml == nullptr)
        return;
    // The comparison slots travel with the session, each parameter by its ID (plain value),
    // so a later layout restores what it knows and defaults the rest.
    std::optional<EditHistory::Values> held[2];
    CompareSlot heldActive;
    {
        const juce::ScopedLock lock(slotLock);
        held[0] = slots[0];
        held[1] = slots[1];
        heldActive = active;
    }
    if (held[0] || held[1])
    {
        auto* slotsXml = xml->createNewChildElement(kSlotsTag.toString());
        slotsXml->setAttribute(kActiveAttr, heldActive == CompareSlot::a ? "A" : "B");
        const auto& params = getParameters();
        for (int k = 0; k < 2; ++k)
        {
            if (!held[k])
                continue;
            auto* slotXml = slotsXml->createNewChildElement(kSlotTag.toString());
            slotXml->setAttribute(kSlotNameAttr, k == 0 ? "A" : "B");
            for (int i = 0; i < params.size() && i < static_cast<int>(held[k]->size()); ++i)
                if (auto* ranged = dynamic_cast<juce::RangedAudioParameter*>(params[i]))
                {
                    auto* e = slotXml->createNewChildElement("PARAM");
                    e->setAttribute("id", ranged->getParameterID());
                    e->setAttribute("value", static_cast<double>(ranged->convertFrom0to1(
                                                 (*held[k])[static_cast<std::size_t>(i)])));
                }
        }
    }
    const auto view = editorSettings();
    auto* editorXml = xml->createNewChildElement(kEditorTag.toString());
    if (view.width > 0 && view.height > 0)
    {
        editorXml->setAttribute(kEditorWidthAttr, view.width);
        editorXml->setAttribute(kEditorHeightAttr, view.height);
    }
    editorXml->setAttribute(kEditorAnalyzerAttr, view.analyzerOn ? 1 : 0);
    copyXmlToBinary(*xml, destData);
}

KerfProcessor::EditorSettings KerfProcessor::editorSettings() const noexcept
{
    return {editorWidth.load(std::memory_order_relaxed),
            editorHeight.load(std::memory_order_relaxed),
            analyzerSwitch.load(std::memory_order_relaxed)};
}

void KerfProcessor::setEditorSize(int width, int height) noexcept
{
    const bool valid =
        width > 0 && height > 0 && width <= kEditorSideMax && height <= kEditorSideMax;
    editorWidth.store(valid ? width : 0, std::memory_order_relaxed);
    editorHeight.store(valid ? height : 0, std::memory_order_relaxed);
}

void KerfProcessor::setAnalyzerSwitch(bool on) noexcept
{
    analyzerSwitch.store(on, std::memory_order_relaxed);
}

void KerfProcessor::restoreEditorSettings(const juce::XmlElement* state)
{
    // Anything missing or out of range: the default size, analyzer off.
    // Plain digits only, read by hand: JUCE's number readers overflow on long digit runs.
    const auto* e = state != nullptr ? state->getChildByName(kEditorTag) : nullptr;
    auto side = [e](const juce::Identifier& name)
    {
        const auto t = e != nullptr ? e->getStringAttribute(name).trim() : juce::String();
        if (t.isEmpty() || t.length() > 5 || !t.containsOnly("0123456789"))
            return 0;
        int v = 0;
        for (auto c : t)
            v = 10 * v + static_cast<int>(c - '0');
        return v;
    };
    setEditorSize(side(kEditorWidthAttr), side(kEditorHeightAttr));
    setAnalyzerSwitch(e != nullptr && e->getStringAttribute(kEditorAnalyzerAttr).trim() == "1");
    editorGeneration.fetch_add(1, std::memory_order_acq_rel);
}

void KerfProcessor::restoreSlots(const juce::XmlElement& state)
{
    const auto* slotsXml = state.getChildByName(kSlotsTag);
    if (slotsXml == nullptr)
        return;
    const auto& params = getParameters();
    std::optional<EditHistory::Values> read[2];
    for (const auto* slotXml : slotsXml->getChildWithTagNameIterator(kSlotTag.toString()))
    {
        const auto name = slotXml->getStringAttribute(kSlotNameAttr);
        if (name != "A" && name != "B")
            continue;
        EditHistory::Values values(static_cast<std::size_t>(params.size()));
        for (int i = 0; i < params.size(); ++i)
        {
            auto* ranged = dynamic_cast<juce::RangedAudioParameter*>(params[i]);
            float v = params[i]->getDefaultValue();
            if (ranged != nullptr)
                if (const auto* e = slotXml->getChildByAttribute("id", ranged->getParameterID()))
                    v = ranged->convertTo0to1(
                        static_cast<float>(readNumber(e->getStringAttribute("value"))));
            values[static_cast<std::size_t>(i)] = v;
        }
        read[name == "A" ? 0 : 1] = std::move(values);
    }
    setSlots(read[0], read[1],
             slotsXml->getStringAttribute(kActiveAttr) == "B" ? CompareSlot::b : CompareSlot::a);
}

void KerfProcessor::resetToDefaults()
{
    for (auto* p : getParameters())
        if (auto* ranged = dynamic_cast<juce::RangedAudioParameter*>(p))
            ranged->setValueNotifyingHost(ranged->getDefaultValue());
}

void KerfProcessor::setStateInformation(const void* data, int sizeInBytes)
{
    stateProblem.clear();
    // A restored session (or the defaults that replace a damaged one) starts a fresh edit
    // history, with the comparison slots it saved (or none).
    edits.clear();
    setSlots({}, {}, CompareSlot::a);
    // The editor's size and analyzer switch: defaults unless the state holds them (below).
    restoreEditorSettings(nullptr);
    // A state Kerf cannot take: say why, and start from the defaults.
    const auto refuse = [this](const juce::String& why)
    {
        stateProblem = why + "; parameters reset to defaults";
        juce::Logger::writeToLog("Kerf: " + stateProblem);
        resetToDefaults();
    };
    if (!stateTextIsSafe(data, sizeInBytes))
        return refuse("the saved state is damaged (its text is not valid UTF-8)");
    if (const auto problem = stateXmlProblem(data, sizeInBytes); !problem.empty())
        return refuse("the saved state is damaged (its XML has " + juce::String(problem) + ")");
    const auto xml = getXmlFromBinary(data, sizeInBytes);
    if (xml == nullptr || !xml->hasTagName(kStateTag))
        return refuse("the saved state is not Kerf state");
    if (const auto where = overflowingNumberAttribute(*xml); where.isNotEmpty())
        return refuse("the saved state is damaged (" + where +
                      " holds a number with an exponent of 10 or more digits)");
    const int version = xml->getIntAttribute(kStateVersionAttr, 0);
    if (version > kStateVersion)
        return refuse("the saved state comes from a newer Kerf (state version " +
                      juce::String(version) + ")");
    // Parameters the saved state lacks (it came from an older Kerf) take their defaults,
    // not whatever happened to be current.
    resetToDefaults();
    auto tree = juce::ValueTree::fromXml(*xml);
    auto current = parameters.copyState();
    for (int i = 0; i < current.getNumChildren(); ++i)
    {
        auto child = current.getChild(i);
        const auto id = child.getProperty("id").toString();
        auto saved = tree.getChildWithProperty("id", id);
        if (saved.isValid() && saved.hasProperty("value"))
            child.setProperty("value", saved.getProperty("value"), nullptr);
        else if (auto* p = parameters.getParameter(id))
            child.setProperty("value", p->convertFrom0to1(p->getDefaultValue()), nullptr);
    }
    parameters.replaceState(current);
    restoreSlots(*xml);
    restoreEditorSettings(xml.get());
}

} // namespace kerf

juce::AudioProcessor* JUCE_CALLTYPE createPluginFilter()
{
    return new kerf::KerfProcessor();
}
