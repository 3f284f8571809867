#pragma once
// Note names and frequencies for the comb pitch: 12-tone equal temperament with A4 = 440 Hz
// (ISO 16:1975), notes numbered as MIDI does (MIDI 1.0: note 69 is A4, 60 is C4).
#include <juce_core/juce_core.h>

#include <optional>

namespace kerf::notes
{

/// The reference pitch, A4, in Hz (ISO 16:1975), and its MIDI note number.
inline constexpr double kA4Hz = 440.0;
inline constexpr int kA4Note = 69;

/// f = 440 * 2^((m - 69) / 12); m may be fractional (cents are hundredths of a note).
double frequencyOfNote(double note);
/// The inverse: 69 + 12 * log2(f / 440) (a fractional note number). f must be positive.
double noteOfFrequency(double hz);

/// The nearest note to a frequency and the remainder in cents (-50 < cents <= 50).
struct NearestNote
{
    int note = kA4Note;
    double cents = 0.0;
};
NearestNote nearestNote(double hz);

/// The name of a note with sharps and its octave, C4 = MIDI 60 (scientific pitch
/// notation): 69 -> "A4", 61 -> "C#4", 0 -> "C-1".
juce::String noteName(int note);
/// A frequency as the nearest note and the cents from it, rounded to whole cents:
/// 440 -> "A4 +0 ct", 150 -> "D3 +37 ct".
juce::String describeFrequency(double hz);

/// Reads a note as a (fractional) note number: a letter A-G (either case), an optional
/// '#' or 'b' (or the signs ♯ ♭), an octave (-1 to 9), then optional cents with a sign
/// and an optional "c", "ct" or "cents": "D#3", "eb4", "C-1", "A4 +15", "F#2 -7 ct".
/// Anything else is nullopt.
std::optional<double> parseNote(const juce::String& text);

} // namespace kerf::notes
