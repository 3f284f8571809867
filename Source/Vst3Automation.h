#pragma once
// Host automation placed where the host puts it, in the VST3 plugin.
//
// JUCE 7.0.5's VST3 wrapper applies only the last point of each parameter's change queue,
// at the start of the block. A VST3 host sends automation as points at sample offsets
// inside the block, the value running linearly from one point to the next (Steinberg VST3
// SDK, pluginterfaces/vst/ivstparameterchanges.h, IParamValueQueue). The plugin answers the
// host's request for its IAudioProcessor with the object below, which forwards every call
// to the wrapper's own and, for a block whose queues hold points after its start, calls
// the wrapper's process() once per piece: each piece starts where a point lies or, while a
// value runs between points, at every kUpdateIntervalSamples-th sample, and carries each
// moved parameter's value at its first sample. The plugin reads its parameters at the
// start of every call, so a change takes effect at the chain's next update point, within
// kUpdateIntervalSamples samples of where the host placed it and never before.

#include <juce_audio_processors/juce_audio_processors.h>

#include <memory>

namespace kerf
{
class Vst3AutomationSplitter;

/// Destroys a splitter (the type is complete only in Vst3Automation.cpp).
struct Vst3AutomationSplitterDeleter
{
    void operator()(Vst3AutomationSplitter* s) const noexcept;
};
using Vst3AutomationSplitterPtr =
    std::unique_ptr<Vst3AutomationSplitter, Vst3AutomationSplitterDeleter>;

/// The IAudioProcessor to hand a VST3 host in place of the wrapper's own, or null when the
/// wrapper's own cannot be found (then the host gets that one, with its block-start
/// automation). `wrapperPlayHead` is the processor's play head: the VST3 wrapper's
/// component is that play head from its construction on. `parameters` are the plugin's.
Vst3AutomationSplitterPtr
makeVst3AutomationSplitter(juce::AudioPlayHead* wrapperPlayHead,
                           const juce::Array<juce::AudioProcessorParameter*>& parameters);

/// For VST3ClientExtensions::queryIAudioProcessor: when `iid` asks for IAudioProcessor and
/// a splitter exists, hands it out (with a reference, as queryInterface does) and returns
/// kResultOk; otherwise returns kNoInterface and sets *obj to null.
int32_t queryVst3AutomationSplitter(Vst3AutomationSplitter* splitter, const Steinberg::TUID iid,
                                    void** obj);
} // namespace kerf
