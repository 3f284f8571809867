#include "Vst3Automation.h"

#include "Smoothing/Transition.h"
#include "Vst3Sdk.h"

#include <algorithm>
#include <array>
#include <cstdint>

namespace kerf
{
namespace
{
using namespace Steinberg;
using Vst::ParamID;
using Vst::ParamValue;

/// One piece's changes as the wrapper reads them: one queue per moved parameter, holding
/// one point at the piece's first sample.
class PieceQueue final : public Vst::IParamValueQueue
{
public:
    ParamID id = 0;
    ParamValue value = 0.0;

    tresult PLUGIN_API queryInterface(const TUID, void** obj) override
    {
        *obj = nullptr;
        return kNoInterface; // lives inside the splitter; hosts never see it
    }
    uint32 PLUGIN_API addRef() override { return 1; }
    uint32 PLUGIN_API release() override { return 1; }
    ParamID PLUGIN_API getParameterId() override { return id; }
    int32 PLUGIN_API getPointCount() override { return 1; }
    tresult PLUGIN_API getPoint(int32 index, int32& sampleOffset, ParamValue& v) override
    {
        if (index != 0)
            return kResultFalse;
        sampleOffset = 0;
        v = value;
        return kResultTrue;
    }
    tresult PLUGIN_API addPoint(int32, ParamValue, int32&) override { return kResultFalse; }
};

class PieceChanges final : public Vst::IParameterChanges
{
public:
    static constexpr int kCapacity = 1024; // more than the plugin's parameters
    std::array<PieceQueue, kCapacity> queues;
    int count = 0;

    tresult PLUGIN_API queryInterface(const TUID, void** obj) override
    {
        *obj = nullptr;
        return kNoInterface;
    }
    uint32 PLUGIN_API addRef() override { return 1; }
    uint32 PLUGIN_API release() override { return 1; }
    int32 PLUGIN_API getParameterCount() override { return count; }
    Vst::IParamValueQueue* PLUGIN_API getParameterData(int32 index) override
    {
        return index >= 0 && index < count ? &queues[static_cast<std::size_t>(index)] : nullptr;
    }
    Vst::IParamValueQueue* PLUGIN_API addParameterData(const ParamID&, int32& index) override
    {
        index = -1;
        return nullptr;
    }
};
} // namespace

class Vst3AutomationSplitter final : public Vst::IAudioProcessor
{
public:
    Vst3AutomationSplitter(Vst::IAudioProcessor& wrapperProcessor, FUnknown& wrapperComponent,
                           const juce::Array<juce::AudioProcessorParameter*>& parameters)
        : wrapper(wrapperProcessor), component(wrapperComponent)
    {
        // The wrapper's ID for each parameter (JUCE 7.0.5, juce_VST3_Wrapper.cpp,
        // generateVSTParamIDForParam: the hash of the parameter's ID without its top bit).
        for (auto* p : parameters)
            if (auto* withId = dynamic_cast<juce::AudioProcessorParameterWithID*>(p))
            {
                const auto id = static_cast<ParamID>(withId->paramID.hashCode()) & 0x7fffffffu;
                const std::size_t h = slotOf(id);
                if (h != kTableSize)
                    table[h] = {id, p};
            }
    }

    // Identity and lifetime are the component's: the host sees one object (COM rules,
    // which VST3 follows: FUnknown::queryInterface).
    tresult PLUGIN_API queryInterface(const TUID targetIid, void** obj) override
    {
        return component.queryInterface(targetIid, obj);
    }
    uint32 PLUGIN_API addRef() override { return component.addRef(); }
    uint32 PLUGIN_API release() override { return component.release(); }

    tresult PLUGIN_API setBusArrangements(Vst::SpeakerArrangement* inputs, int32 numIns,
                                          Vst::SpeakerArrangement* outputs, int32 numOuts) override
    {
        return wrapper.setBusArrangements(inputs, numIns, outputs, numOuts);
    }
    tresult PLUGIN_API getBusArrangement(Vst::BusDirection dir, int32 index,
                                         Vst::SpeakerArrangement& arr) override
    {
        return wrapper.getBusArrangement(dir, index, arr);
    }
    tresult PLUGIN_API canProcessSampleSize(int32 size) override
    {
        return wrapper.canProcessSampleSize(size);
    }
    uint32 PLUGIN_API getLatencySamples() override { return wrapper.getLatencySamples(); }
    tresult PLUGIN_API setupProcessing(Vst::ProcessSetup& setup) override
    {
        return wrapper.setupProcessing(setup);
    }
    tresult PLUGIN_API setProcessing(TBool state) override { return wrapper.setProcessing(state); }
    uint32 PLUGIN_API getTailSamples() override { return wrapper.getTailSamples(); }

    tresult PLUGIN_API process(Vst::ProcessData& data) override
    {
        int numCurves = 0;
        bool inside = false; // a point after the block's first sample
        if (data.inputParameterChanges != nullptr && data.numSamples > 1 &&
            (data.symbolicSampleSize == Vst::kSample32 ||
             data.symbolicSampleSize == Vst::kSample64) &&
            fitsBuses(data.inputs, data.numInputs) && fitsBuses(data.outputs, data.numOutputs))
        {
            Vst::IParameterChanges& in = *data.inputParameterChanges;
            const int32 n = std::min<int32>(in.getParameterCount(), PieceChanges::kCapacity);
            for (int32 i = 0; i < n; ++i)
            {
                Vst::IParamValueQueue* q = in.getParameterData(i);
                if (q == nullptr || q->getPointCount() <= 0)
                    continue;
                Curve& c = curves[static_cast<std::size_t>(numCurves++)];
                c.queue = q;
                c.id = q->getParameterId();
                c.points = q->getPointCount();
                int32 offset = 0;
                ParamValue v = 0.0;
                q->getPoint(c.points - 1, offset, v);
                inside = inside || offset > 0;
            }
        }
        if (!inside)
            return wrapper.process(data);

        // Pieces: a new one wherever some parameter's value differs from the one its
        // piece started with, looked at where points lie and, between them, every
        // kUpdateIntervalSamples samples.
        for (int c = 0; c < numCurves; ++c)
        {
            Curve& cv = curves[static_cast<std::size_t>(c)];
            cv.next = 0;
            cv.hasBefore = valueBefore(cv.id, cv.before);
            cv.held = -1.0; // no value given in this block yet
        }
        uint64 silentOut[kMaxBuses];
        for (int b = 0; b < data.numOutputs; ++b)
            silentOut[b] = ~uint64{0};
        const int total = data.numSamples;
        int pieceStart = 0;
        bool first = true;
        collect(0, *current, numCurves);
        while (pieceStart < total)
        {
            // The next place where a value moves.
            int at = total;
            for (int s = nextCandidate(pieceStart, total, numCurves); s < total;
                 s = nextCandidate(s, total, numCurves))
            {
                collect(s, *upcoming, numCurves);
                if (upcoming->count > 0)
                {
                    at = s;
                    break;
                }
            }
            runPiece(data, pieceStart, at - pieceStart, *current, first, silentOut);
            first = false;
            pieceStart = at;
            std::swap(current, upcoming);
        }
        for (int b = 0; b < data.numOutputs; ++b)
            data.outputs[b].silenceFlags = silentOut[b];
        return kResultOk;
    }

private:
    static constexpr int kMaxBuses = 8;
    static constexpr int kMaxBusChannels = 32;

    struct Curve
    {
        Vst::IParamValueQueue* queue = nullptr;
        ParamID id = 0;
        int32 points = 0;
        int32 next = 0;         // the first point after the last sample looked at
        bool hasBefore = false; // the value before the block is known
        ParamValue before = 0.0;
        ParamValue held = -1.0; // the value given to the plugin (-1: none yet)
    };

    // Each parameter by the wrapper's ID: where a block's first point for a parameter lies
    // after its start, the value runs from the parameter's value before the block (the
    // SDK's implicit point at offset -1). Open addressing, filled once.
    struct Entry
    {
        ParamID id = 0;
        juce::AudioProcessorParameter* parameter = nullptr;
    };
    static constexpr std::size_t kTableSize = 2048;
    std::array<Entry, kTableSize> table{};

    Vst::IAudioProcessor& wrapper;
    FUnknown& component;
    std::array<Curve, PieceChanges::kCapacity> curves{};
    PieceChanges changesA, changesB;
    PieceChanges* current = &changesA;
    PieceChanges* upcoming = &changesB;
    std::array<Vst::AudioBusBuffers, kMaxBuses> inBuses{}, outBuses{};
    std::array<std::array<void*, kMaxBusChannels>, kMaxBuses> inChannels{}, outChannels{};

    static bool fitsBuses(const Vst::AudioBusBuffers* buses, int32 count) noexcept
    {
        if (count < 0 || count > kMaxBuses || (count > 0 && buses == nullptr))
            return false;
        for (int32 b = 0; b < count; ++b)
            if (buses[b].numChannels < 0 || buses[b].numChannels > kMaxBusChannels)
                return false;
        return true;
    }

    std::size_t slotOf(ParamID id) const noexcept
    {
        std::size_t h = (static_cast<std::size_t>(id) * 2654435761u) % kTableSize;
        for (std::size_t probe = 0; probe < kTableSize; ++probe, h = (h + 1) % kTableSize)
            if (table[h].parameter == nullptr || table[h].id == id)
                return h;
        return kTableSize; // full
    }

    /// The parameter's value now (normalised, as the wrapper gives it), if it is known.
    bool valueBefore(ParamID id, ParamValue& v) const noexcept
    {
        const std::size_t h = slotOf(id);
        if (h == kTableSize || table[h].parameter == nullptr)
            return false;
        v = static_cast<ParamValue>(table[h].parameter->getValue());
        return true;
    }

    /// The next sample after `s` where a value may move: a point, or the next multiple of
    /// kUpdateIntervalSamples while some value runs between points.
    int nextCandidate(int s, int total, int numCurves) noexcept
    {
        int next = total;
        bool running = false;
        for (int c = 0; c < numCurves; ++c)
        {
            Curve& cv = curves[static_cast<std::size_t>(c)];
            while (cv.next < cv.points)
            {
                int32 offset = 0;
                ParamValue v = 0.0;
                cv.queue->getPoint(cv.next, offset, v);
                if (offset > s)
                {
                    next = std::min(next, static_cast<int>(offset));
                    // Between points (or from the value before the block to the first).
                    running = running || cv.next > 0 || cv.hasBefore;
                    break;
                }
                ++cv.next;
            }
        }
        if (running)
        {
            constexpr int K = dsp::kUpdateIntervalSamples;
            next = std::min(next, (s / K + 1) * K);
        }
        return next;
    }

    /// The value of curve `cv` at sample `s`: linear between points, the last point's
    /// value after it, and before the first from the value before the block; false (no
    /// value to give) before the first point when that value is not known.
    static bool valueAt(const Curve& cv, int s, ParamValue& out) noexcept
    {
        double x0 = -1.0, y0 = cv.before;
        bool known = cv.hasBefore;
        for (int32 i = 0; i < cv.points; ++i)
        {
            int32 offset = 0;
            ParamValue v = 0.0;
            cv.queue->getPoint(i, offset, v);
            if (offset <= s)
            {
                x0 = offset;
                y0 = v;
                known = true;
                continue;
            }
            if (!known)
                return false;
            out = y0 +
                  (v - y0) * ((static_cast<double>(s) - x0) / (static_cast<double>(offset) - x0));
            return true;
        }
        out = y0;
        return known;
    }

    /// The parameters whose value at sample `s` differs from the one last given.
    void collect(int s, PieceChanges& out, int numCurves) noexcept
    {
        out.count = 0;
        for (int c = 0; c < numCurves; ++c)
        {
            Curve& cv = curves[static_cast<std::size_t>(c)];
            ParamValue v = 0.0;
            if (!valueAt(cv, s, v) || v == cv.held)
                continue;
            cv.held = v;
            PieceQueue& q = out.queues[static_cast<std::size_t>(out.count++)];
            q.id = cv.id;
            q.value = v;
        }
    }

    static void offsetBuses(const Vst::AudioBusBuffers* from, int32 count,
                            std::array<Vst::AudioBusBuffers, kMaxBuses>& to,
                            std::array<std::array<void*, kMaxBusChannels>, kMaxBuses>& channels,
                            int start, bool wide) noexcept
    {
        for (int32 b = 0; b < count; ++b)
        {
            const auto ub = static_cast<std::size_t>(b);
            to[ub].numChannels = from[b].numChannels;
            to[ub].silenceFlags = from[b].silenceFlags;
            for (int32 ch = 0; ch < from[b].numChannels; ++ch)
            {
                const auto uc = static_cast<std::size_t>(ch);
                if (wide)
                    channels[ub][uc] = from[b].channelBuffers64 != nullptr &&
                                               from[b].channelBuffers64[ch] != nullptr
                                           ? from[b].channelBuffers64[ch] + start
                                           : nullptr;
                else
                    channels[ub][uc] = from[b].channelBuffers32 != nullptr &&
                                               from[b].channelBuffers32[ch] != nullptr
                                           ? from[b].channelBuffers32[ch] + start
                                           : nullptr;
            }
            if (wide)
                to[ub].channelBuffers64 = reinterpret_cast<Vst::Sample64**>(channels[ub].data());
            else
                to[ub].channelBuffers32 = reinterpret_cast<Vst::Sample32**>(channels[ub].data());
        }
    }

    void runPiece(Vst::ProcessData& data, int start, int length, PieceChanges& changes, bool first,
                  uint64* silentOut) noexcept
    {
        const bool wide = data.symbolicSampleSize == Vst::kSample64;
        offsetBuses(data.inputs, data.numInputs, inBuses, inChannels, start, wide);
        offsetBuses(data.outputs, data.numOutputs, outBuses, outChannels, start, wide);
        Vst::ProcessData piece = data;
        piece.numSamples = length;
        piece.inputs = data.numInputs > 0 ? inBuses.data() : nullptr;
        piece.outputs = data.numOutputs > 0 ? outBuses.data() : nullptr;
        piece.inputParameterChanges = &changes;
        // Events and outgoing changes are the first piece's (Kerf takes no MIDI and sends
        // no parameter changes from its audio thread).
        if (!first)
        {
            piece.inputEvents = nullptr;
            piece.outputEvents = nullptr;
            piece.outputParameterChanges = nullptr;
        }
        wrapper.process(piece);
        for (int b = 0; b < data.numOutputs; ++b)
            silentOut[b] &= outBuses[static_cast<std::size_t>(b)].silenceFlags;
    }
};

Vst3AutomationSplitterPtr
makeVst3AutomationSplitter(juce::AudioPlayHead* wrapperPlayHead,
                           const juce::Array<juce::AudioProcessorParameter*>& parameters)
{
    // The VST3 wrapper's component is the processor's play head and implements
    // IAudioProcessor and IComponent (JUCE 7.0.5, juce_VST3_Wrapper.cpp); any other play
    // head (another format, a host app) is not, and gives no splitter.
    auto* processor = dynamic_cast<Vst::IAudioProcessor*>(wrapperPlayHead);
    auto* component = dynamic_cast<Vst::IComponent*>(wrapperPlayHead);
    if (processor == nullptr || component == nullptr)
        return nullptr;
    return Vst3AutomationSplitterPtr(
        new Vst3AutomationSplitter(*processor, *component, parameters));
}

int32_t queryVst3AutomationSplitter(Vst3AutomationSplitter* splitter, const TUID targetIid,
                                    void** obj)
{
    *obj = nullptr;
    if (splitter == nullptr || !FUnknownPrivate::iidEqual(targetIid, Vst::IAudioProcessor_iid))
        return kNoInterface;
    splitter->addRef();
    *obj = static_cast<Vst::IAudioProcessor*>(splitter);
    return kResultOk;
}

void Vst3AutomationSplitterDeleter::operator()(Vst3AutomationSplitter* s) const noexcept
{
    delete s;
}
} // namespace kerf
