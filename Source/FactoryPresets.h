#pragma once
// The factory chain files from Presets/, compiled into the binary.
#include "ChainFile.h"

namespace kerf
{

/// One factory preset: its display name and chain.
struct FactoryPreset
{
    juce::String name;
    juce::String fileName;
    dsp::ChainSpec chain;
};

/// All factory presets, parsed once (first call) and sorted by file name.
/// A preset that fails to parse is a build defect: the test suite checks every one.
const juce::Array<FactoryPreset>& factoryPresets();

} // namespace kerf
