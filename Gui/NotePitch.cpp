#include "NotePitch.h"

#include <cmath>
#include <cstring>

namespace kerf::notes
{

double frequencyOfNote(double note)
{
    return kA4Hz * std::exp2((note - kA4Note) / 12.0);
}

double noteOfFrequency(double hz)
{
    return kA4Note + 12.0 * std::log2(hz / kA4Hz);
}

NearestNote nearestNote(double hz)
{
    const double m = noteOfFrequency(hz);
    NearestNote n;
    n.note = static_cast<int>(std::lround(m));
    n.cents = 100.0 * (m - n.note);
    return n;
}

juce::String noteName(int note)
{
    static const char* const names[] = {"C",  "C#", "D",  "D#", "E",  "F",
                                        "F#", "G",  "G#", "A",  "A#", "B"};
    const int pitchClass = ((note % 12) + 12) % 12;
    const int octave = (note - pitchClass) / 12 - 1;
    return juce::String(names[pitchClass]) + juce::String(octave);
}

juce::String describeFrequency(double hz)
{
    if (!(hz > 0.0) || !std::isfinite(hz))
        return "-";
    const auto n = nearestNote(hz);
    const int cents = static_cast<int>(std::lround(n.cents));
    return noteName(n.note) + (cents < 0 ? " -" : " +") + juce::String(std::abs(cents)) + " ct";
}

std::optional<double> parseNote(const juce::String& text)
{
    auto t = text.trim();
    if (t.isEmpty())
        return std::nullopt;
    // Letter.
    static const int letterClass[] = {9, 11, 0, 2, 4, 5, 7}; // A B C D E F G
    const auto letter = juce::CharacterFunctions::toUpperCase(t[0]);
    if (letter < 'A' || letter > 'G')
        return std::nullopt;
    int pitchClass = letterClass[letter - 'A'];
    int i = 1;
    // Accidental.
    if (i < t.length() && (t[i] == '#' || t[i] == 0x266f))
    {
        ++pitchClass;
        ++i;
    }
    else if (i < t.length() && (t[i] == 'b' || t[i] == 0x266d))
    {
        --pitchClass;
        ++i;
    }
    // Octave: an optional '-' directly followed by one digit.
    bool negative = false;
    if (i + 1 < t.length() && t[i] == '-' && juce::CharacterFunctions::isDigit(t[i + 1]))
    {
        negative = true;
        ++i;
    }
    if (i >= t.length() || !juce::CharacterFunctions::isDigit(t[i]))
        return std::nullopt;
    const int digit = t[i] - '0';
    ++i;
    if (i < t.length() && juce::CharacterFunctions::isDigit(t[i]))
        return std::nullopt; // octaves have one digit
    const int octave = negative ? -digit : digit;
    if (octave < -1 || octave > 9)
        return std::nullopt;
    double note = (octave + 1) * 12 + pitchClass;
    // Cents.
    auto rest = t.substring(i).trim().toLowerCase();
    for (const char* unit : {"cents", "ct", "c"})
        if (rest.endsWith(unit))
        {
            rest = rest.dropLastCharacters(static_cast<int>(std::strlen(unit))).trim();
            break;
        }
    if (rest.isNotEmpty())
    {
        if (!(rest.startsWithChar('+') || rest.startsWithChar('-')))
            return std::nullopt;
        const auto digits = rest.substring(1).trim();
        if (digits.isEmpty() || !digits.containsOnly("0123456789.") ||
            digits.indexOfChar('.') != digits.lastIndexOfChar('.'))
            return std::nullopt;
        const double cents = digits.getDoubleValue();
        if (cents > 100.0)
            return std::nullopt;
        note += (rest.startsWithChar('-') ? -cents : cents) / 100.0;
    }
    return note;
}

} // namespace kerf::notes
