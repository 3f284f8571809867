// Writes an LV2 state folder (manifest.ttl + state.ttl, the layout jalv's -l option reads)
// holding Kerf's state for a chain file and an output gain, the way the LV2 build stores it:
// JUCE 7.0.5's LV2 client (juce_LV2_Client.cpp, store()) saves getStateInformation() as
// base64 text under <URI>:StateString, an atom:String (LV2 State extension).
//
// Usage: kerf_lv2_state CHAIN.json OUTPUT_GAIN_DB OUT_DIR PLUGIN_URI
#include "ChainFile.h"
#include "PluginProcessor.h"

#include <iostream>

int main(int argc, char** argv)
{
    if (argc != 5)
    {
        std::cerr << "usage: kerf_lv2_state CHAIN.json OUTPUT_GAIN_DB OUT_DIR PLUGIN_URI\n";
        return 2;
    }
    juce::ScopedJuceInitialiser_GUI juce;
    const auto parsed = kerf::readChainFile(
        juce::File::getCurrentWorkingDirectory().getChildFile(juce::String::fromUTF8(argv[1])));
    if (!parsed.ok)
    {
        std::cerr << parsed.error << "\n";
        return 1;
    }
    kerf::KerfProcessor processor;
    if (const auto error = processor.importChain(parsed.chain); error.isNotEmpty())
    {
        std::cerr << error << "\n";
        return 1;
    }
    auto* gain = processor.state().getParameter(kerf::ids::outputGain);
    gain->setValueNotifyingHost(gain->convertTo0to1(juce::String(argv[2]).getFloatValue()));

    juce::MemoryBlock state;
    processor.getStateInformation(state);
    const juce::String uri = juce::String::fromUTF8(argv[4]);
    const auto dir =
        juce::File::getCurrentWorkingDirectory().getChildFile(juce::String::fromUTF8(argv[3]));
    if (!dir.createDirectory())
    {
        std::cerr << "cannot create " << dir.getFullPathName() << "\n";
        return 1;
    }
    const juce::String prefixes = "@prefix lv2: <http://lv2plug.in/ns/lv2core#> .\n"
                                  "@prefix pset: <http://lv2plug.in/ns/ext/presets#> .\n"
                                  "@prefix rdfs: <http://www.w3.org/2000/01/rdf-schema#> .\n"
                                  "@prefix state: <http://lv2plug.in/ns/ext/state#> .\n\n";
    const bool ok =
        dir.getChildFile("manifest.ttl")
            .replaceWithText(prefixes + "<state.ttl>\n\ta pset:Preset ;\n\tlv2:appliesTo <" + uri +
                             "> ;\n\trdfs:seeAlso <state.ttl> .\n") &&
        dir.getChildFile("state.ttl")
            .replaceWithText(prefixes + "<>\n\ta pset:Preset ;\n\tlv2:appliesTo <" + uri +
                             "> ;\n\tstate:state [\n\t\t<" + uri + ":StateString> \"" +
                             state.toBase64Encoding() + "\"\n\t] .\n");
    if (!ok)
    {
        std::cerr << "cannot write the state files in " << dir.getFullPathName() << "\n";
        return 1;
    }
    return 0;
}
