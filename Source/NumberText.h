#pragma once

#include <juce_core/juce_core.h>

namespace kerf
{

/// Reads the number at the start of `text` the way juce::String::getDoubleValue does
/// (leading white space, one sign, digits with at most one decimal point, an optional
/// exponent; 0 when the text does not start with a number; +-inf beyond the range of a
/// double) but without its undefined behaviour: JUCE 7.0.5 adds up the exponent's digits
/// in an int with no overflow check (juce_CharacterFunctions.h, readDoubleValue), so ten
/// or more exponent digits overflow. Every number Kerf reads from typed or stored text
/// goes through here.
double readNumber(const juce::String& text);

/// True when JUCE's own reading of `text` as a number (String::getDoubleValue, and the
/// JSON and var conversions built on it) would overflow: the text starts with a number
/// whose exponent has ten or more significant digits. Text that JUCE will read itself (a
/// saved state's attributes) is refused when this holds. Found by fuzzing
/// (Tests/fuzz/regressions).
bool overflowsJuceNumberReader(const juce::String& text);

} // namespace kerf
