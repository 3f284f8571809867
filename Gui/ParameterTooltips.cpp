#include "ParameterTooltips.h"

namespace kerf
{

namespace
{
/// "sec07_freq" -> 7 and "freq"; "comb2_mix" -> 2 and "mix"; "echo_r3_gain" -> 3 and "gain".
struct IdParts
{
    juce::String family; // "sec", "comb", "echo_r", or the whole ID
    int number = 0;
    juce::String field;
};

IdParts splitId(const juce::String& id)
{
    for (const char* family : {"echo_r", "sec", "comb"})
        if (id.startsWith(family))
        {
            const auto rest = id.substring(juce::String(family).length());
            const auto number = rest.upToFirstOccurrenceOf("_", false, false);
            if (number.isNotEmpty() && number.containsOnly("0123456789"))
                return {family, number.getIntValue(),
                        rest.fromFirstOccurrenceOf("_", false, false)};
        }
    return {id, 0, {}};
}
} // namespace

juce::String parameterTooltip(const juce::String& id)
{
    const auto p = splitId(id);
    const juce::String n(p.number);
    if (p.family == "sec")
    {
        const juce::String s = "section " + n;
        if (p.field == "on")
            return "Switches " + s + " on or off (its settings stay)";
        if (p.field == "type")
            return "Filter shape of " + s +
                   ": peaking, shelves, high-/low-pass, notch, band-pass, all-pass or tilt";
        if (p.field == "freq")
            return "Centre or corner frequency of " + s + " (type 1k for 1000 Hz)";
        if (p.field == "gain")
            return "Boost or cut of " + s + " in dB (peaking, shelves and tilt)";
        if (p.field == "q")
            return "Q of " + s + ": higher is narrower (also the resonant corner's Q)";
        if (p.field == "slope")
            return "Shelf slope S of " + s + " (1 is the steepest without overshoot)";
        if (p.field == "order")
            return "Order of " + s + " as a high- or low-pass: 6 dB per octave each";
        if (p.field == "align")
            return "Alignment of " + s +
                   " as a high- or low-pass: Butterworth, Linkwitz-Riley or resonant";
        if (p.field == "chan")
            return "Which signal " + s + " filters: both channels, left, right, mid or side";
        if (p.field == "design")
            return "How " + s + " is designed: accurate (close to the analog response) or bilinear";
        return {};
    }
    if (p.family == "echo_r")
    {
        if (p.field == "delay")
            return "Delay of reflection " + n + " the echo stage cancels";
        if (p.field == "gain")
            return "Gain of reflection " + n + " (negative: inverted; 0 leaves it out)";
        return {};
    }
    if (p.family == "comb")
    {
        const juce::String c = "comb " + n;
        if (p.field == "on")
            return "Switches " + c + " on or off (its settings stay)";
        if (p.field == "mode")
            return "Feedforward (evenly spaced notches) or feedback (evenly spaced peaks)";
        if (p.field == "tuning")
            return "Whether " + c + " follows its delay or its pitch";
        if (p.field == "delay")
            return "Delay of " + c + " (used when its tuning is Delay)";
        if (p.field == "pitch")
            return "Fundamental of " + c + " (used when its tuning is Pitch)";
        if (p.field == "gain")
            return "Gain of " + c + "'s delayed path: depth of notches or height of peaks";
        if (p.field == "damp")
            return "Low-pass inside " + c + "'s delayed path (the top of the range: none)";
        if (p.field == "mix")
            return "Dry/wet of " + c + " (1: comb only)";
        if (p.field == "change")
            return "How " + c +
                   " takes a new delay or pitch: crossfade (no pitch sweep) or "
                   "sweep (the pitch glides over the glide time)";
        return {};
    }
    if (id == "echo_on")
        return "Switches the echo-cancellation stage on or off";
    if (id == "echo_method")
        return "Echo cancellation as the exact recursive inverse or a series of delayed terms";
    if (id == "echo_terms")
        return "Terms of the series method: more cancel further echoes of the echo";
    if (id == "out_gain")
        return "Gain after the whole chain, in dB";
    if (id == "protect_on")
        return "Limits output peaks at the protection ceiling";
    if (id == "protect_ceiling")
        return "Highest output level the protection lets through, dBFS";
    if (id == "glide_ms")
        return "How long every change glides or crossfades (0: the shortest clean move)";
    if (id == "bypass")
        return "Passes the input through untouched (crossfaded, no click)";
    return {};
}

} // namespace kerf
