// The built Kerf.vst3, loaded through JUCE's own VST3 hosting code (the way a JUCE-based DAW
// loads it), checked against the kerf command and against itself after a state round trip.
//
// External references:
// - The kerf command renders a chain file with the DSP core and no plugin wrapper: the
//   plugin, driven by a host with the same settings, must produce the same samples.
// - VST3 parameters are normalised to [0, 1] and converted to and from text by the plugin's
//   edit controller (Steinberg VST3 SDK, IEditController::getParamValueByString /
//   getParamStringByValue): the test sets every value through that text interface and
//   reads it back through it, as a host's text entry field does.
// - A host restores a session by handing the plugin the bytes it saved
//   (IComponent::getState / setState); the restored plugin must be indistinguishable
//   (common practice: DAWs rely on it for recall).
#include "../Dsp/AllocationHook.h"
#include "ChainFile.h"
#include "Vst3Sdk.h"

#include <catch2/catch.hpp>
#include <juce_audio_formats/juce_audio_formats.h>
#include <juce_audio_processors/juce_audio_processors.h>
#include <juce_events/juce_events.h>

#include <cmath>
#include <random>
#include <utility>
#include <vector>

namespace
{
constexpr double kRate = 48000.0;
constexpr int kBlock = 512;
constexpr int kChannels = 2;
// Not a multiple of kBlock: the last block is a short one, as hosts send at the end of a
// loop or before a tempo change (common practice).
constexpr int kLength = 96000 + 300;

/// Loads the built bundle through JUCE's VST3 hosting code.
std::unique_ptr<juce::AudioPluginInstance> loadKerf()
{
    juce::VST3PluginFormat format;
    juce::OwnedArray<juce::PluginDescription> types;
    format.findAllTypesForFile(types, KERF_VST3_PATH);
    REQUIRE(types.size() == 1);
    CHECK(types[0]->name == "Kerf");
    juce::String error;
    auto instance = format.createInstanceFromDescription(*types[0], kRate, kBlock, error);
    INFO("load error: " << error);
    REQUIRE(instance != nullptr);
    return instance;
}

/// Prepares for stereo at kRate / kBlock (what a DAW does before playback).
void prepareStereo(juce::AudioPluginInstance& p)
{
    juce::AudioProcessor::BusesLayout layout;
    layout.inputBuses.add(juce::AudioChannelSet::stereo());
    layout.outputBuses.add(juce::AudioChannelSet::stereo());
    REQUIRE(p.setBusesLayout(layout));
    p.setRateAndBufferSizeDetails(kRate, kBlock);
    p.prepareToPlay(kRate, kBlock);
    REQUIRE(p.getTotalNumInputChannels() == kChannels);
    REQUIRE(p.getTotalNumOutputChannels() == kChannels);
}

/// Deterministic noise burst, peak 0.1 (-20 dBFS), different on each channel (invented).
/// Its peak stays far below the -1 dBFS output ceiling even after the boosts used here.
juce::AudioBuffer<float> testSignal()
{
    juce::AudioBuffer<float> b(kChannels, kLength);
    std::mt19937 rng(20240601u);
    std::uniform_real_distribution<float> u(-0.1f, 0.1f);
    for (int ch = 0; ch < kChannels; ++ch)
        for (int i = 0; i < kLength; ++i)
            b.setSample(ch, i, u(rng));
    return b;
}

/// Runs the hosted plugin over a whole signal in kBlock blocks (the last one shorter).
juce::AudioBuffer<float> processAll(juce::AudioPluginInstance& p,
                                    const juce::AudioBuffer<float>& in)
{
    juce::AudioBuffer<float> out(in);
    juce::MidiBuffer midi;
    for (int start = 0; start < out.getNumSamples(); start += kBlock)
    {
        const int n = std::min(kBlock, out.getNumSamples() - start);
        juce::AudioBuffer<float> view(out.getArrayOfWritePointers(), kChannels, start, n);
        p.processBlock(view, midi);
    }
    return out;
}

juce::AudioProcessorParameter* paramByName(juce::AudioPluginInstance& p, const juce::String& name)
{
    for (auto* param : p.getParameters())
        if (param->getName(256) == name)
            return param;
    FAIL("the hosted plugin has no parameter named '" << name << "'");
    return nullptr;
}

/// Sets a parameter the way a host's text field does: the plugin converts the text to a
/// normalised value, the host sends that value.
void setByText(juce::AudioPluginInstance& p, const juce::String& name, const juce::String& text)
{
    auto* param = paramByName(p, name);
    param->setValueNotifyingHost(param->getValueForText(text));
}

/// The value of a parameter as the plugin displays it, parsed back to a number.
double readBackNumber(juce::AudioPluginInstance& p, const juce::String& name)
{
    auto* param = paramByName(p, name);
    const auto text = param->getText(param->getValue(), 64);
    const double scale = text.containsIgnoreCase("kHz") ? 1000.0 : 1.0;
    return text.retainCharacters("0123456789.-").getDoubleValue() * scale;
}

struct Band
{
    int slot; // 1-based, as the parameter names count
    const char* freq;
    const char* gain;
    const char* q;
    double freqHz, gainDb, qValue; // the same values as numbers, to check the read-back
};

// An invented chain: a low lift, a narrow cut, a presence lift, and slot 4 left off so the
// chain the host describes skips it. Values are chosen so that the plugin's display text
// (2 decimals for Q and kHz, 1 for dB) shows them exactly.
const Band kBands[] = {
    {1, "120 Hz", "4.5 dB", "0.70", 120.0, 4.5, 0.70},
    {2, "1.25 kHz", "-6.0 dB", "4.00", 1250.0, -6.0, 4.0},
    {3, "5.60 kHz", "3.0 dB", "1.50", 5600.0, 3.0, 1.5},
    {5, "9.00 kHz", "-2.5 dB", "2.00", 9000.0, -2.5, 2.0},
};

juce::String sectionName(int slot, const char* what)
{
    return "Section " + juce::String(slot) + " " + what;
}

/// Runs the kerf command; returns its exit code, output on failure in the log.
int runKerf(const juce::StringArray& args)
{
    juce::StringArray cmd;
    cmd.add(KERF_CLI_PATH);
    cmd.addArray(args);
    juce::ChildProcess proc;
    REQUIRE(proc.start(cmd, juce::ChildProcess::wantStdOut | juce::ChildProcess::wantStdErr));
    const auto output = proc.readAllProcessOutput();
    REQUIRE(proc.waitForProcessToFinish(60000));
    const int code = static_cast<int>(proc.getExitCode());
    if (code != 0)
        UNSCOPED_INFO("kerf said: " << output);
    return code;
}

void writeFloatWav(const juce::File& f, const juce::AudioBuffer<float>& b)
{
    f.deleteFile();
    juce::WavAudioFormat wav;
    std::unique_ptr<juce::AudioFormatWriter> w(
        wav.createWriterFor(new juce::FileOutputStream(f), kRate,
                            static_cast<unsigned>(b.getNumChannels()), 32, {}, 0));
    REQUIRE(w != nullptr);
    REQUIRE(w->writeFromAudioSampleBuffer(b, 0, b.getNumSamples()));
}

juce::AudioBuffer<float> readWav(const juce::File& f)
{
    juce::WavAudioFormat wav;
    std::unique_ptr<juce::AudioFormatReader> r(
        wav.createReaderFor(new juce::FileInputStream(f), true));
    REQUIRE(r != nullptr);
    juce::AudioBuffer<float> b(static_cast<int>(r->numChannels),
                               static_cast<int>(r->lengthInSamples));
    REQUIRE(r->read(&b, 0, b.getNumSamples(), 0, true, true));
    return b;
}

struct Diff
{
    double maxAbs = 0.0;
    double peak = 0.0;
};

Diff compare(const juce::AudioBuffer<float>& a, const juce::AudioBuffer<float>& b)
{
    REQUIRE(a.getNumChannels() == b.getNumChannels());
    REQUIRE(a.getNumSamples() == b.getNumSamples());
    Diff d;
    for (int ch = 0; ch < a.getNumChannels(); ++ch)
        for (int i = 0; i < a.getNumSamples(); ++i)
        {
            d.maxAbs =
                std::max(d.maxAbs, std::abs(double(a.getSample(ch, i)) - b.getSample(ch, i)));
            d.peak = std::max(d.peak, std::abs(double(b.getSample(ch, i))));
        }
    return d;
}

struct TempDir
{
    juce::File dir = juce::File::getSpecialLocation(juce::File::tempDirectory)
                         .getNonexistentChildFile("kerf-vst3-host-test", "", false);
    TempDir() { dir.createDirectory(); }
    ~TempDir() { dir.deleteRecursively(); }
};

/// kerf render of `in` through `chainJson`.
juce::AudioBuffer<float> renderWithKerf(const juce::AudioBuffer<float>& in,
                                        const juce::String& chainJson)
{
    TempDir tmp;
    const auto inFile = tmp.dir.getChildFile("in.wav");
    const auto outFile = tmp.dir.getChildFile("out.wav");
    const auto chainFile = tmp.dir.getChildFile("chain.json");
    writeFloatWav(inFile, in);
    REQUIRE(chainFile.replaceWithText(chainJson));
    REQUIRE(runKerf({"render", inFile.getFullPathName(), outFile.getFullPathName(), "--chain",
                     chainFile.getFullPathName()}) == 0);
    return readWav(outFile);
}
} // namespace

TEST_CASE("VST3: loads as a stereo, zero-latency effect with the factory programs", "[host][vst3]")
{
    juce::ScopedJuceInitialiser_GUI juce;
    auto plugin = loadKerf();
    prepareStereo(*plugin);
    // Plugin documentation: zero latency.
    CHECK(plugin->getLatencySamples() == 0);
    // Programs: 0 is "Flat", then one per file in Presets/ in file-name order (plugin docs).
    auto files = juce::File(KERF_SOURCE_DIR "/Presets")
                     .findChildFiles(juce::File::findFiles, false, "*.json");
    files.sort();
    REQUIRE(files.size() > 0);
    CHECK(plugin->getNumPrograms() == files.size() + 1);
    CHECK(plugin->getProgramName(0) == "Flat");
    plugin->releaseResources();
}

TEST_CASE("VST3: each factory program renders like kerf render of its preset file", "[host][vst3]")
{
    juce::ScopedJuceInitialiser_GUI juce;
    auto files = juce::File(KERF_SOURCE_DIR "/Presets")
                     .findChildFiles(juce::File::findFiles, false, "*.json");
    files.sort();
    REQUIRE(files.size() > 0);
    const auto input = testSignal();
    for (int i = 0; i < files.size(); ++i)
    {
        const auto& file = files.getReference(i);
        INFO("program " << i + 1 << ", " << file.getFileName());
        auto plugin = loadKerf();
        prepareStereo(*plugin);
        // The program's name is the preset file's "name" field (plugin docs).
        const auto json = juce::JSON::parse(file);
        CHECK(plugin->getProgramName(i + 1) == json.getProperty("name", {}).toString());
        // A host changes program, then starts playback (release, prepare) with it.
        plugin->setCurrentProgram(i + 1);
        juce::AudioBuffer<float> silence(kChannels, kBlock);
        silence.clear();
        processAll(*plugin, silence);
        plugin->releaseResources();
        prepareStereo(*plugin);
        CHECK(plugin->getCurrentProgram() == i + 1);

        const auto hosted = processAll(*plugin, input);
        plugin->releaseResources();
        const auto reference = renderWithKerf(input, file.loadFileAsString());
        const Diff d = compare(hosted, reference);
        const Diff fromInput = compare(hosted, input);
        WARN(file.getFileName() << ": hosted vs kerf render: max abs error " << d.maxAbs
                                << " (peak " << d.peak << ")");
        // Bar and its reasons: as in the next test case (1e-6; the preset files hold values
        // such as Q 1.1 that float rounds by up to 6e-8 relative). Measured: 0 .. 1.5e-8,
        // except the song-key comb preset, 3.3e-7: its pitch 164.81 Hz as float moves the
        // feedback loop's 291-sample delay by about 2e-5 samples, carried by the resonance.
        CHECK(d.maxAbs < 1e-6);
        CHECK(fromInput.maxAbs > 1e-2); // not a bypass: each preset cuts or lifts by 2 dB or more
        CHECK(d.peak < 0.5);            // far below the -1 dBFS output ceiling
    }
}

TEST_CASE("VST3: a chain set through host parameters renders like kerf render", "[host][vst3]")
{
    juce::ScopedJuceInitialiser_GUI juce;
    auto plugin = loadKerf();
    prepareStereo(*plugin);

    for (const auto& b : kBands)
    {
        setByText(*plugin, sectionName(b.slot, "on"), "On");
        setByText(*plugin, sectionName(b.slot, "frequency"), b.freq);
        setByText(*plugin, sectionName(b.slot, "gain"), b.gain);
        setByText(*plugin, sectionName(b.slot, "Q"), b.q);
    }

    // The chain as the host sees it: read back through the plugin's display text.
    kerf::dsp::ChainSpec chain;
    for (int slot = 1; slot <= 24; ++slot)
    {
        auto* on = paramByName(*plugin, sectionName(slot, "on"));
        if (on->getValue() < 0.5f)
            continue;
        kerf::dsp::StageSpec s;
        s.freqHz = readBackNumber(*plugin, sectionName(slot, "frequency"));
        s.gainDb = readBackNumber(*plugin, sectionName(slot, "gain"));
        s.q = readBackNumber(*plugin, sectionName(slot, "Q"));
        chain.push(s);
    }
    // The host read back exactly what it set (the values were picked to display exactly).
    REQUIRE(chain.numStages == static_cast<int>(std::size(kBands)));
    for (int i = 0; i < chain.numStages; ++i)
    {
        CHECK(chain.stages[size_t(i)].freqHz == Approx(kBands[i].freqHz).epsilon(1e-9));
        CHECK(chain.stages[size_t(i)].gainDb == Approx(kBands[i].gainDb).epsilon(1e-9));
        CHECK(chain.stages[size_t(i)].q == Approx(kBands[i].qValue).epsilon(1e-9));
    }

    const auto input = testSignal();
    const auto hosted = processAll(*plugin, input);
    plugin->releaseResources();
    const auto reference = renderWithKerf(input, kerf::chainToJson(chain, "vst3 host test"));

    const Diff d = compare(hosted, reference);
    const Diff fromInput = compare(hosted, input);
    UNSCOPED_INFO("hosted vs kerf render: max abs error " << d.maxAbs << ", output peak " << d.peak
                                                          << "; hosted vs input: max abs "
                                                          << fromInput.maxAbs);
    WARN("hosted vs kerf render: max abs error " << d.maxAbs << " (peak " << d.peak << ")");
    // Measured on the reference machine (Debian 12, GCC 12, -O3): 7.5e-9 at peak 0.14.
    // Expected: the plugin holds parameters as float (Q 0.7 rounds by ~1e-8 relative, IEEE 754
    // single), the chain file as double; a section turns that into an output difference of
    // about that times the signal. Bar 1e-6: over 100x the measured error, yet it can fail: a
    // 0.01 dB gain, 0.1 % frequency or 0.1 % Q error in any one section of this chain moves
    // the output by at least 3e-5, 3e-5 and 1.1e-5 (computed with Cookbook filters, SciPy).
    CHECK(d.maxAbs < 1e-6);
    // Not a bypass: the chain's 4.5 dB lift and 6 dB cut change the noise by far more.
    CHECK(fromInput.maxAbs > 1e-2);
    // The signal never came near the -1 dBFS output ceiling (so the ceiling did not act).
    CHECK(d.peak < 0.5);
}

TEST_CASE("VST3: a saved state restores into a new instance", "[host][vst3]")
{
    juce::ScopedJuceInitialiser_GUI juce;
    auto first = loadKerf();
    prepareStereo(*first);
    for (const auto& b : kBands)
    {
        setByText(*first, sectionName(b.slot, "on"), "On");
        setByText(*first, sectionName(b.slot, "frequency"), b.freq);
        setByText(*first, sectionName(b.slot, "gain"), b.gain);
        setByText(*first, sectionName(b.slot, "Q"), b.q);
    }
    setByText(*first, "Output gain", "-3.0 dB");
    // A hosted VST3 delivers new values to the processor with the next block; one block of
    // silence delivers them, and a stop / start (release, prepare) then starts the output
    // gain at its new value as the restored instance will (no gain ramp in its first block).
    juce::AudioBuffer<float> silence(kChannels, kBlock);
    silence.clear();
    processAll(*first, silence);
    first->releaseResources();
    prepareStereo(*first);
    const auto input = testSignal();
    const auto firstOut = processAll(*first, input);

    juce::MemoryBlock saved;
    first->getStateInformation(saved);
    REQUIRE(saved.getSize() > 0);

    auto second = loadKerf();
    second->setStateInformation(saved.getData(), static_cast<int>(saved.getSize()));
    prepareStereo(*second);

    const auto& p1 = first->getParameters();
    const auto& p2 = second->getParameters();
    REQUIRE(p1.size() == p2.size());
    // 24 slots x 4 + output gain + protection on + ceiling (Source/Parameters.cpp layout),
    // plus what the VST3 wrapper adds (program change, bypass).
    CHECK(p1.size() >= 24 * 4 + 3);
    int differing = 0;
    for (int i = 0; i < p1.size(); ++i)
        if (p1[i]->getValue() != p2[i]->getValue())
        {
            ++differing;
            UNSCOPED_INFO(p1[i]->getName(64)
                          << ": " << p1[i]->getValue() << " vs " << p2[i]->getValue());
        }
    CHECK(differing == 0);

    const auto secondOut = processAll(*second, input);
    const Diff d = compare(secondOut, firstOut);
    // Identical parameters through identical code: the same bits.
    CHECK(d.maxAbs == 0.0);
    first->releaseResources();
    second->releaseResources();
}

TEST_CASE("VST3: the host's bypass switch crossfades to the untouched input", "[host][vst3]")
{
    // VST3 SDK: a parameter flagged kIsBypass is the host's bypass switch; the plugin then
    // processes while bypassed and must output its input (Steinberg VST3 documentation,
    // "Bypass"). Kerf fades over its glide time (20 ms by default), so from 0.1 s after
    // the switch the output must equal the input exactly, and before the switch equal the
    // processed signal.
    juce::ScopedJuceInitialiser_GUI juce;
    auto plugin = loadKerf();
    prepareStereo(*plugin);
    auto* bypass = plugin->getBypassParameter();
    REQUIRE(bypass != nullptr);
    CHECK(bypass->getName(64) == "Bypass");
    for (const auto& b : kBands)
    {
        setByText(*plugin, sectionName(b.slot, "on"), "On");
        setByText(*plugin, sectionName(b.slot, "frequency"), b.freq);
        setByText(*plugin, sectionName(b.slot, "gain"), b.gain);
        setByText(*plugin, sectionName(b.slot, "Q"), b.q);
    }
    const auto input = testSignal();
    auto output = input;
    juce::MidiBuffer midi;
    const int switchAt = 48 * kBlock; // about 0.5 s
    for (int start = 0; start < output.getNumSamples(); start += kBlock)
    {
        if (start == switchAt)
            bypass->setValueNotifyingHost(1.0f);
        const int n = std::min(kBlock, output.getNumSamples() - start);
        juce::AudioBuffer<float> view(output.getArrayOfWritePointers(), kChannels, start, n);
        plugin->processBlock(view, midi);
    }
    plugin->releaseResources();
    double beforeDiff = 0.0, afterDiff = 0.0;
    for (int ch = 0; ch < kChannels; ++ch)
    {
        for (int i = 0; i < switchAt; ++i)
            beforeDiff = std::max(
                beforeDiff, double(std::abs(output.getSample(ch, i) - input.getSample(ch, i))));
        for (int i = switchAt + static_cast<int>(0.1 * kRate); i < output.getNumSamples(); ++i)
            afterDiff = std::max(
                afterDiff, double(std::abs(output.getSample(ch, i) - input.getSample(ch, i))));
    }
    CHECK(beforeDiff > 1e-2); // processing before the switch (4.5 and 6 dB sections)
    CHECK(afterDiff == 0.0);  // the input, untouched, once faded
}

namespace
{
namespace vst = Steinberg::Vst;

/// A parameter's automation for one block, as a host sends it (VST3 SDK,
/// ivstparameterchanges.h: points at sample offsets, the value linear between them).
class HostQueue final : public vst::IParamValueQueue
{
public:
    HostQueue(vst::ParamID id, std::vector<std::pair<int, double>> points)
        : paramId(id), pts(std::move(points))
    {
    }
    Steinberg::tresult PLUGIN_API queryInterface(const Steinberg::TUID, void** obj) override
    {
        *obj = nullptr;
        return Steinberg::kNoInterface;
    }
    Steinberg::uint32 PLUGIN_API addRef() override { return 1; }
    Steinberg::uint32 PLUGIN_API release() override { return 1; }
    vst::ParamID PLUGIN_API getParameterId() override { return paramId; }
    Steinberg::int32 PLUGIN_API getPointCount() override
    {
        return static_cast<Steinberg::int32>(pts.size());
    }
    Steinberg::tresult PLUGIN_API getPoint(Steinberg::int32 index, Steinberg::int32& offset,
                                           vst::ParamValue& value) override
    {
        if (index < 0 || index >= getPointCount())
            return Steinberg::kResultFalse;
        offset = pts[static_cast<std::size_t>(index)].first;
        value = pts[static_cast<std::size_t>(index)].second;
        return Steinberg::kResultTrue;
    }
    Steinberg::tresult PLUGIN_API addPoint(Steinberg::int32, vst::ParamValue,
                                           Steinberg::int32&) override
    {
        return Steinberg::kResultFalse;
    }

private:
    vst::ParamID paramId;
    std::vector<std::pair<int, double>> pts;
};

class HostChanges final : public vst::IParameterChanges
{
public:
    std::vector<HostQueue> queues;
    Steinberg::tresult PLUGIN_API queryInterface(const Steinberg::TUID, void** obj) override
    {
        *obj = nullptr;
        return Steinberg::kNoInterface;
    }
    Steinberg::uint32 PLUGIN_API addRef() override { return 1; }
    Steinberg::uint32 PLUGIN_API release() override { return 1; }
    Steinberg::int32 PLUGIN_API getParameterCount() override
    {
        return static_cast<Steinberg::int32>(queues.size());
    }
    vst::IParamValueQueue* PLUGIN_API getParameterData(Steinberg::int32 index) override
    {
        return index >= 0 && index < getParameterCount() ? &queues[static_cast<std::size_t>(index)]
                                                         : nullptr;
    }
    vst::IParamValueQueue* PLUGIN_API addParameterData(const vst::ParamID&,
                                                       Steinberg::int32& index) override
    {
        index = -1;
        return nullptr;
    }
};

/// Calls the plugin's IAudioProcessor::process on samples [start, start + n) of `buf`, in
/// place, with the given changes (offsets relative to `start`).
Steinberg::tresult processDirect(vst::IAudioProcessor& ap, juce::AudioBuffer<float>& buf, int start,
                                 int n, HostChanges* changes)
{
    float* ch[kChannels] = {buf.getWritePointer(0) + start, buf.getWritePointer(1) + start};
    vst::AudioBusBuffers in, out;
    in.numChannels = out.numChannels = kChannels;
    in.channelBuffers32 = ch;
    out.channelBuffers32 = ch;
    vst::ProcessData d;
    d.processMode = vst::kRealtime;
    d.symbolicSampleSize = vst::kSample32;
    d.numSamples = n;
    d.numInputs = d.numOutputs = 1;
    d.inputs = &in;
    d.outputs = &out;
    d.inputParameterChanges = changes;
    return ap.process(d);
}

/// A loaded, prepared plugin with section 1 on (1.25 kHz, Q 2, 0 dB), settled, and its
/// IAudioProcessor as a host reaches it (IComponent::queryInterface).
struct DirectHost
{
    std::unique_ptr<juce::AudioPluginInstance> plugin = loadKerf();
    vst::IAudioProcessor* ap = nullptr;
    vst::ParamID gainId = 0;
    juce::AudioProcessorParameter* gain = nullptr;

    explicit DirectHost(const juce::AudioBuffer<float>& settle)
    {
        prepareStereo(*plugin);
        setByText(*plugin, sectionName(1, "on"), "On");
        setByText(*plugin, sectionName(1, "frequency"), "1.25 kHz");
        setByText(*plugin, sectionName(1, "Q"), "2.00");
        setByText(*plugin, sectionName(1, "gain"), "0.0 dB");
        gain = paramByName(*plugin, sectionName(1, "gain"));
        auto* hosted = dynamic_cast<juce::HostedAudioProcessorParameter*>(gain);
        REQUIRE(hosted != nullptr);
        gainId = static_cast<vst::ParamID>(hosted->getParameterID().getLargeIntValue());
        auto scratch = settle;
        processAll(*plugin, scratch); // the settings arrive and every glide ends
        struct ComponentOf final : juce::ExtensionsVisitor
        {
            vst::IComponent* component = nullptr;
            void visitVST3Client(const VST3Client& c) override { component = c.getIComponentPtr(); }
        } visitor;
        plugin->getExtensions(visitor);
        auto* component = visitor.component;
        REQUIRE(component != nullptr);
        void* obj = nullptr;
        REQUIRE(component->queryInterface(vst::IAudioProcessor_iid, &obj) == Steinberg::kResultOk);
        ap = static_cast<vst::IAudioProcessor*>(obj);
        REQUIRE(ap != nullptr);
    }
    ~DirectHost()
    {
        if (ap != nullptr)
            ap->release();
        plugin->releaseResources();
    }
    double value(const char* text) const { return gain->getValueForText(text); }
};
} // namespace

TEST_CASE("VST3: automation points inside a block take effect where the host puts them",
          "[host][vst3]")
{
    // VST3 SDK (pluginterfaces/vst/ivstparameterchanges.h, IParamValueQueue): a host sends
    // automation as points at sample offsets inside the block, the value running linearly
    // from one point to the next, a jump being two points on adjacent samples; before the
    // block's first point the value runs from the one before the block (an implicit point
    // at offset -1). The plugin reads its parameters at the start of each call, so a block
    // whose points jump at offsets 300 and 400 must give exactly what it gives when the
    // host cuts the block there and sends each new value at the start of its piece; and a
    // block whose one point lies at its last sample must give what it gives when the host
    // cuts the block every 32 samples (the plugin's update interval) and sends the value
    // of the SDK's interpolation formula at each cut. JUCE 7.0.5's wrapper alone applies
    // the last point at the block's start: the test checks that this differs.
    juce::ScopedJuceInitialiser_GUI juce;
    const auto input = testSignal();
    juce::AudioBuffer<float> settle(kChannels, 20 * kBlock);
    for (int ch = 0; ch < kChannels; ++ch)
        settle.copyFrom(ch, 0, input, ch, 0, settle.getNumSamples());
    const int at = 40 * kBlock; // where the automated block starts in the test signal
    const int tail = 8 * kBlock;

    // Runs the blocks from `at` on: the automated block as `pieces` (start, length,
    // changes), then `tail` samples without changes.
    using Piece = std::tuple<int, int, std::vector<std::pair<int, double>>>;
    //
    // Realtime safety: JUCE 7.0.5's VST3 wrapper itself allocates and frees in every
    // process() call (juce_VST3Common.h, ClientBufferMapperData::setUpInputChannels copies
    // each bus's channel mapping, a std::vector, by value), so the allocator hook counts
    // what one plain call costs and requires the automated block to cost exactly that per
    // piece the plugin is called with: the splitting itself allocates nothing. `calls` is
    // how many calls the automated block must come to.
    auto render = [&](const std::vector<Piece>& pieces, int calls)
    {
        DirectHost host(settle);
        auto out = input;
        long long automated = 0;
        for (const auto& [start, length, points] : pieces)
        {
            HostChanges changes;
            if (!points.empty())
                changes.queues.emplace_back(host.gainId, points);
            const long long before = kerf::allochook::count();
            Steinberg::tresult result = Steinberg::kResultFalse;
            {
                kerf::allochook::Scope counting;
                result = processDirect(*host.ap, out, at + start, length, &changes);
            }
            automated += kerf::allochook::count() - before;
            REQUIRE(result == Steinberg::kResultOk);
        }
        long long plain = -1;
        for (int s = at + kBlock; s < at + kBlock + tail; s += kBlock)
        {
            const long long before = kerf::allochook::count();
            Steinberg::tresult result = Steinberg::kResultFalse;
            {
                kerf::allochook::Scope counting;
                result = processDirect(*host.ap, out, s, kBlock, nullptr);
            }
            if (plain < 0)
                plain = kerf::allochook::count() - before;
            REQUIRE(result == Steinberg::kResultOk);
        }
        INFO("allocations and frees: " << automated << " in the automated block, " << plain
                                       << " in a plain call, " << calls << " calls");
        CHECK(automated == calls * plain);
        juce::AudioBuffer<float> seen(kChannels, kBlock + tail);
        for (int ch = 0; ch < kChannels; ++ch)
            seen.copyFrom(ch, 0, out, ch, at, kBlock + tail);
        return seen;
    };
    double zero = 0.0, up = 0.0, down = 0.0;
    {
        DirectHost probe(settle);
        zero = probe.value("0.0 dB");
        up = probe.value("9.0 dB");
        down = probe.value("-6.0 dB");
    }

    SECTION("jumps")
    {
        // Pieces from 0, 300 and 400 (the values hold still between the points).
        const auto placed =
            render({{0, kBlock, {{299, zero}, {300, up}, {399, up}, {400, down}}}}, 3);
        const auto cut =
            render({{0, 300, {}}, {300, 100, {{0, up}}}, {400, kBlock - 400, {{0, down}}}}, 3);
        const auto atStart = render({{0, kBlock, {{0, down}}}}, 1);
        const auto same = compare(placed, cut);
        const auto early = compare(placed, atStart);
        INFO("placed vs cut by hand: " << same.maxAbs << ", vs the last value at block start: "
                                       << early.maxAbs << " (peak " << same.peak << ")");
        CHECK(same.maxAbs == 0.0);
        CHECK(early.maxAbs > 1e-2);
    }
    SECTION("a ramp to the block's last sample")
    {
        // The SDK's formula: from (-1, the value before) to (511, the point's value).
        const double x1 = -1.0, y1 = zero, x2 = kBlock - 1, y2 = up;
        const double slope = (y2 - y1) / (x2 - x1), offset = y1 - slope * x1;
        std::vector<Piece> byHand;
        for (int s = 0; s < kBlock; s += 32)
            byHand.push_back({s, 32, {{0, slope * s + offset}}});
        // The last point's own sample gets its exact value.
        std::get<1>(byHand.back()) = 31;
        byHand.push_back({kBlock - 1, 1, {{0, y2}}});
        // Pieces from every 32nd sample and from the point's own.
        const auto placed = render({{0, kBlock, {{kBlock - 1, up}}}}, kBlock / 32 + 1);
        const auto cut = render(byHand, kBlock / 32 + 1);
        const auto atStart = render({{0, kBlock, {{0, up}}}}, 1);
        const auto same = compare(placed, cut);
        const auto early = compare(placed, atStart);
        INFO("placed vs cut by hand: " << same.maxAbs << ", vs the last value at block start: "
                                       << early.maxAbs << " (peak " << same.peak << ")");
        // The formula's arithmetic differs from the plugin's in the last bits of a value
        // handed on as float: a margin far below what the placement changes.
        CHECK(same.maxAbs < 1e-5);
        CHECK(early.maxAbs > 1e-2);
    }
}
