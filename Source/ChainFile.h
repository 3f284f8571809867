#pragma once
// Reading and writing chain files: one JSON description of a processing graph shared by
// the command line, the factory presets and the plugin's import/export.
// Format reference: README.md, "Chain files".
#include "Chain.h"

#include <juce_core/juce_core.h>

namespace kerf
{

inline constexpr const char* kChainFormatName = "kerf-chain";
inline constexpr int kChainFormatVersion = 1;

/// Outcome of reading a chain: either a chain or a message naming the stage and field.
struct ChainReadResult
{
    bool ok = false;
    dsp::ChainSpec chain;
    juce::String name;  ///< optional "name" of the chain (presets use it)
    juce::String error; ///< e.g. "stage 2, field 'q': 0 is out of range (0.025 to 40)"
};

/// Parses chain-file JSON text. Never throws; every problem becomes an error message.
ChainReadResult parseChainJson(const juce::String& jsonText);

/// Parses chain-file bytes (UTF-8, or UTF-16 with its byte-order mark). Text holding a NUL
/// character is refused: a JUCE string ends at it, but JUCE's JSON parser reads on past it.
ChainReadResult parseChainBytes(const void* data, std::size_t size);

/// Reads and parses a chain file.
ChainReadResult readChainFile(const juce::File& file);

/// Writes a chain as chain-file JSON text (pretty-printed, stable field order).
juce::String chainToJson(const dsp::ChainSpec& chain, const juce::String& name = {});

} // namespace kerf
