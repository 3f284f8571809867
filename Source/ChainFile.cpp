#include "ChainFile.h"

#include "Limits.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstring>
#include <optional>

namespace kerf
{

namespace
{

struct FieldError
{
    juce::String message;
};

/// Shortest text that reads back as exactly the same double.
juce::String formatNumber(double v)
{
    // -0 is written as 0: JUCE's parser reads "-0" as the integer 0, so "-0" would not read
    // back as the same text (found by fuzzing: "gain_db": -0.0).
    if (v == 0.0)
        v = 0.0;
    char buf[64];
    const auto res = std::to_chars(buf, buf + sizeof(buf), v);
    return juce::String(buf, static_cast<size_t>(res.ptr - buf));
}

std::optional<double> readNumber(const juce::var& v)
{
    if (v.isInt() || v.isInt64() || v.isDouble())
        return static_cast<double>(v);
    return std::nullopt;
}

/// Reads a number field in [lo, hi]; missing -> fallback when given, else an error.
juce::String readRanged(const juce::DynamicObject& obj, const char* field, double lo, double hi,
                        std::optional<double> fallback, const juce::String& where, double& out)
{
    const juce::Identifier id(field);
    if (!obj.hasProperty(id))
    {
        if (fallback)
        {
            out = *fallback;
            return {};
        }
        return where + ", field '" + field + "': missing (a number from " + formatNumber(lo) +
               " to " + formatNumber(hi) + " is required)";
    }
    const auto value = readNumber(obj.getProperty(id));
    if (!value)
        return where + ", field '" + field + "': expected a number, got " +
               juce::JSON::toString(obj.getProperty(id), true);
    if (!std::isfinite(*value) || *value < lo || *value > hi)
        return where + ", field '" + field + "': " + formatNumber(*value) + " is out of range (" +
               formatNumber(lo) + " to " + formatNumber(hi) + ")";
    out = *value;
    return {};
}

/// Reads the optional boolean "enabled" field into `enabled`.
juce::String readEnabled(const juce::DynamicObject& obj, const juce::String& where, bool& enabled)
{
    if (!obj.hasProperty("enabled"))
        return {};
    const juce::var e = obj.getProperty("enabled");
    if (!e.isBool())
        return where + ", field 'enabled': expected true or false";
    enabled = static_cast<bool>(e);
    return {};
}

/// Reads a whole-number field in [lo, hi]; missing -> fallback.
juce::String readInteger(const juce::DynamicObject& obj, const char* field, int lo, int hi,
                         int fallback, const juce::String& where, int& out)
{
    double value = fallback;
    auto err = readRanged(obj, field, lo, hi, static_cast<double>(fallback), where, value);
    if (err.isNotEmpty())
        return err;
    if (value != std::floor(value))
        return where + ", field '" + field + "': expected a whole number, got " +
               formatNumber(value);
    out = static_cast<int>(value);
    return {};
}

/// Reads a string field whose value must be one of `names`; missing -> index 0.
juce::String readChoice(const juce::DynamicObject& obj, const char* field,
                        const juce::StringArray& names, const juce::String& where, int& out)
{
    out = 0;
    if (!obj.hasProperty(field))
        return {};
    const auto v = obj.getProperty(field);
    const int index = v.isString() ? names.indexOf(v.toString()) : -1;
    if (index < 0)
        return where + ", field '" + field + "': expected one of " + names.joinIntoString(", ") +
               ", got " + juce::JSON::toString(v, true);
    out = index;
    return {};
}

const juce::StringArray& typeNames()
{
    static const juce::StringArray names = []
    {
        juce::StringArray n;
        for (int i = 0; i < dsp::kNumStageTypes; ++i)
            n.add(juce::String(std::string(dsp::stageTypeName(static_cast<dsp::StageType>(i)))));
        return n;
    }();
    return names;
}

juce::StringArray namesOf(std::initializer_list<std::string_view> list)
{
    juce::StringArray n;
    for (auto s : list)
        n.add(juce::String(std::string(s)));
    return n;
}

/// The fields a stage type reads, besides type, enabled, channels and design.
juce::StringArray fieldsOf(dsp::StageType type)
{
    using T = dsp::StageType;
    switch (type)
    {
    case T::peaking:
        return {"freq_hz", "gain_db", "q"};
    case T::lowShelf:
    case T::highShelf:
        return {"freq_hz", "gain_db", "slope"};
    case T::highPass:
    case T::lowPass:
        return {"freq_hz", "order", "alignment", "q"};
    case T::notch:
    case T::bandPass:
        return {"freq_hz", "q"};
    case T::allPass:
        return {"freq_hz", "order", "q"};
    case T::tilt:
        return {"freq_hz", "gain_db"};
    case T::echoCancel:
        return {"method", "terms", "reflections", "non_causal"};
    case T::comb:
        return {"mode",       "delay_ms", "pitch_hz",      "gain",
                "damping_hz", "mix",      "interpolation", "delay_change"};
    }
    return {};
}

/// The echo_cancel fields: method, terms, reflections [{delay_ms, gain}], non_causal, enabled.
juce::String readEchoStage(const juce::DynamicObject& obj, const juce::String& where,
                           dsp::StageSpec& s)
{
    int method = 0;
    auto err = readChoice(obj, "method", {"exact", "series"}, where, method);
    if (err.isEmpty())
        err = readInteger(obj, "terms", 1, dsp::kMaxEchoSeriesTerms, 4, where, s.echo.terms);
    if (err.isNotEmpty())
        return err;
    s.echo.method = method == 0 ? dsp::EchoMethod::exact : dsp::EchoMethod::series;
    const juce::var list = obj.getProperty("reflections");
    if (!list.isArray() || list.size() < 1 || list.size() > dsp::kMaxEchoReflections)
        return where + ", field 'reflections': expected an array of 1 to " +
               juce::String(dsp::kMaxEchoReflections) +
               " objects like {\"delay_ms\": 12.7, \"gain\": 0.5}";
    s.echo.numReflections = list.size();
    for (int k = 0; k < list.size(); ++k)
    {
        const juce::String at = where + ", reflection " + juce::String(k);
        auto* r = list[k].getDynamicObject();
        if (r == nullptr || list[k].isArray())
            return at + ": expected an object like {\"delay_ms\": 12.7, \"gain\": 0.5}";
        auto& refl = s.echo.reflections[static_cast<std::size_t>(k)];
        err = readRanged(*r, "delay_ms", dsp::kMinEchoDelayMs, dsp::kMaxEchoDelayMs, std::nullopt,
                         at, refl.delayMs);
        if (err.isEmpty())
            err = readRanged(*r, "gain", -dsp::limits::kEchoGainMax, dsp::limits::kEchoGainMax,
                             std::nullopt, at, refl.gain);
        if (err.isNotEmpty())
            return err;
        for (const auto& prop : r->getProperties())
            if (prop.name.toString() != "delay_ms" && prop.name.toString() != "gain")
                return at + ", field '" + prop.name.toString() +
                       "': not a reflection field (delay_ms, gain)";
    }
    if (obj.hasProperty("non_causal"))
    {
        const juce::var nc = obj.getProperty("non_causal");
        if (!nc.isBool())
            return where + ", field 'non_causal': expected true or false";
        s.nonCausal = static_cast<bool>(nc);
        if (s.nonCausal && s.echo.method != dsp::EchoMethod::exact)
            return where + ", field 'non_causal': only the exact method runs backwards in time";
    }
    if (auto enabledError = readEnabled(obj, where, s.enabled); enabledError.isNotEmpty())
        return enabledError;
    return {};
}

/// The comb fields: mode, delay_ms or pitch_hz, gain, damping_hz, mix, interpolation,
/// delay_change.
juce::String readCombStage(const juce::DynamicObject& obj, const juce::String& where,
                           dsp::StageSpec& s)
{
    auto& c = s.comb;
    int mode = 0, interp = 0, change = 0;
    auto err = readChoice(obj, "mode", {"feedforward", "feedback"}, where, mode);
    if (err.isEmpty())
        err = readChoice(obj, "interpolation", {"lagrange", "thiran"}, where, interp);
    if (err.isEmpty())
        err = readChoice(obj, "delay_change", {"crossfade", "sweep"}, where, change);
    if (err.isEmpty() && change == 1 && interp == 1)
        err = where + ", field 'delay_change': \"sweep\" needs \"interpolation\": \"lagrange\" "
                      "(a moving all-pass interpolator would click)";
    if (err.isNotEmpty())
        return err;
    c.sweepDelay = change == 1;
    c.mode = mode == 0 ? dsp::CombMode::feedforward : dsp::CombMode::feedback;
    c.interpolation =
        interp == 0 ? dsp::DelayInterpolation::lagrange : dsp::DelayInterpolation::thiran;
    const bool hasDelay = obj.hasProperty("delay_ms"), hasPitch = obj.hasProperty("pitch_hz");
    if (hasDelay == hasPitch)
        return where + ", field 'delay_ms': give either delay_ms (" +
               formatNumber(dsp::kCombMinDelayMs) + " to " + formatNumber(dsp::kCombMaxDelayMs) +
               " ms) or pitch_hz, exactly one";
    if (hasDelay)
        err = readRanged(obj, "delay_ms", dsp::kCombMinDelayMs, dsp::kCombMaxDelayMs, std::nullopt,
                         where, c.delayMs);
    else
    {
        // One period of the pitch must fit the delay range.
        err = readRanged(obj, "pitch_hz", 1000.0 / dsp::kCombMaxDelayMs,
                         1000.0 / dsp::kCombMinDelayMs, std::nullopt, where, c.pitchHz);
        c.delayMs = 1000.0 / std::max(c.pitchHz, 1.0);
    }
    // The feedback loop is stable only below |g| = 1; Kerf holds it at kMaxFeedbackGain.
    const double gainLimit =
        c.mode == dsp::CombMode::feedback ? dsp::kMaxFeedbackGain : dsp::kMaxFeedforwardGain;
    if (err.isEmpty())
        err = readRanged(obj, "gain", -gainLimit, gainLimit, 0.5, where, c.gain);
    if (err.isNotEmpty() && c.mode == dsp::CombMode::feedback && err.contains("'gain'"))
        err << " (a feedback comb is held below 1 in magnitude to stay stable)";
    if (err.isEmpty())
        err = readRanged(obj, "damping_hz", 0.0, dsp::limits::kFreqMaxHz, 0.0, where, c.dampingHz);
    if (err.isEmpty())
        err = readRanged(obj, "mix", 0.0, 1.0, 1.0, where, c.mix);
    if (err.isNotEmpty())
        return err;
    if (auto enabledError = readEnabled(obj, where, s.enabled); enabledError.isNotEmpty())
        return enabledError;
    return {};
}

juce::String readStage(const juce::var& v, int index, dsp::StageSpec& out)
{
    using namespace dsp::limits;
    using T = dsp::StageType;
    const juce::String where = "stage " + juce::String(index);
    auto* obj = v.getDynamicObject();
    if (obj == nullptr || v.isArray())
        return where + ": expected an object like {\"type\": \"peaking\", ...}";

    const juce::String known = "known types: " + typeNames().joinIntoString(", ");
    if (!obj->hasProperty("type"))
        return where + ", field 'type': missing (" + known + ")";
    const juce::var typeVar = obj->getProperty("type");
    if (!typeVar.isString())
        return where + ", field 'type': expected a string (" + known + ")";
    const juce::String type = typeVar.toString();
    const int typeIndex = typeNames().indexOf(type);
    if (typeIndex < 0)
        return where + ", field 'type': unknown type \"" + type + "\" (" + known + ")";

    dsp::StageSpec s;
    s.type = static_cast<T>(typeIndex);
    const juce::StringArray fields = fieldsOf(s.type);
    if (s.type == T::echoCancel || s.type == T::comb)
    {
        auto echoErr =
            s.type == T::comb ? readCombStage(*obj, where, s) : readEchoStage(*obj, where, s);
        if (echoErr.isNotEmpty())
            return echoErr;
        juce::StringArray allowed{"type", "enabled"};
        allowed.addArray(fields);
        for (const auto& prop : obj->getProperties())
            if (!allowed.contains(prop.name.toString()))
                return where + ", field '" + prop.name.toString() + "': not a field of type " +
                       type + " (its fields: " + allowed.joinIntoString(", ") + ")";
        out = s;
        return {};
    }
    juce::String err;
    auto has = [&](const char* f) { return fields.contains(f); };

    err = readRanged(*obj, "freq_hz", kFreqMinHz, kFreqMaxHz, std::nullopt, where, s.freqHz);
    if (err.isEmpty() && has("gain_db"))
        err = readRanged(*obj, "gain_db", kGainMinDb, kGainMaxDb, 0.0, where, s.gainDb);
    if (err.isEmpty() && has("slope"))
        err = readRanged(*obj, "slope", kSlopeMin, kSlopeMax, 1.0, where, s.slope);
    if (err.isEmpty() && (s.type == T::highPass || s.type == T::lowPass))
    {
        err = readInteger(*obj, "order", kPassOrderMin, kPassOrderMax, 2, where, s.order);
        int align = 0;
        if (err.isEmpty())
            err = readChoice(*obj, "alignment",
                             namesOf({dsp::alignmentName(dsp::PassAlignment::butterworth),
                                      dsp::alignmentName(dsp::PassAlignment::linkwitzRiley)}),
                             where, align);
        s.alignment = static_cast<dsp::PassAlignment>(align);
        if (err.isEmpty() && s.alignment == dsp::PassAlignment::linkwitzRiley && s.order % 2 != 0)
            err = where + ", field 'alignment': linkwitz_riley needs an even order (2, 4, 6 or 8)";
        s.q = 0.0; // the alignment's own Q unless a resonant corner is asked for
        if (err.isEmpty() && obj->hasProperty("q"))
        {
            if (s.order != 2 || s.alignment != dsp::PassAlignment::butterworth)
                err = where + ", field 'q': only an order-2 butterworth high-/low-pass takes a q "
                              "(a resonant corner)";
            else
                err = readRanged(*obj, "q", kQMin, kQMax, std::nullopt, where, s.q);
        }
    }
    else if (err.isEmpty() && has("q"))
        err = readRanged(*obj, "q", kQMin, kQMax, s.type == T::allPass ? 0.7071 : 1.0, where, s.q);
    if (err.isEmpty() && s.type == T::allPass)
        err = readInteger(*obj, "order", kAllPassOrderMin, kAllPassOrderMax, 2, where, s.order);
    if (err.isNotEmpty())
        return err;

    if (auto enabledError = readEnabled(*obj, where, s.enabled); enabledError.isNotEmpty())
        return enabledError;
    int channels = 0, design = 0;
    err = readChoice(*obj, "channels",
                     namesOf({dsp::channelModeName(dsp::ChannelMode::both),
                              dsp::channelModeName(dsp::ChannelMode::left),
                              dsp::channelModeName(dsp::ChannelMode::right),
                              dsp::channelModeName(dsp::ChannelMode::mid),
                              dsp::channelModeName(dsp::ChannelMode::side)}),
                     where, channels);
    if (err.isEmpty())
        err = readChoice(*obj, "design",
                         namesOf({dsp::designModeName(dsp::DesignMode::accurate),
                                  dsp::designModeName(dsp::DesignMode::bilinear)}),
                         where, design);
    if (err.isNotEmpty())
        return err;
    s.channels = static_cast<dsp::ChannelMode>(channels);
    s.design = static_cast<dsp::DesignMode>(design);

    juce::StringArray allowed{"type", "enabled", "channels", "design"};
    allowed.addArray(fields);
    for (const auto& prop : obj->getProperties())
        if (!allowed.contains(prop.name.toString()))
            return where + ", field '" + prop.name.toString() + "': not a field of type " + type +
                   " (its fields: " + allowed.joinIntoString(", ") + ")";
    out = s;
    return {};
}

/// JSON string literal of `text` (RFC 8259, section 7): quotation mark, reverse solidus and
/// control characters escaped, every other character as itself in UTF-8. (JUCE's
/// JSON::toString writes a character beyond U+FFFF as a UTF-16 surrogate pair of \u
/// escapes, which JUCE's own parser reads back as two separate, invalid characters; found
/// by fuzzing: a name with such a character did not read back.)
juce::String jsonStringLiteral(const juce::String& text)
{
    juce::String out = "\"";
    for (auto p = text.getCharPointer(); !p.isEmpty();)
    {
        const auto c = p.getAndAdvance();
        if (c == '"' || c == '\\')
            out << "\\" << juce::String::charToString(c);
        else if (c == '\n')
            out << "\\n";
        else if (c == '\t')
            out << "\\t";
        else if (c == '\r')
            out << "\\r";
        else if (c < 0x20)
            out << "\\u" << juce::String::toHexString(static_cast<int>(c)).paddedLeft('0', 4);
        else
            out << juce::String::charToString(c);
    }
    return out << "\"";
}

/// `text` with each UTF-16 surrogate pair (as JUCE's JSON parser leaves a \uD83D\uDE00
/// escape: two code points) joined into the one character it encodes (RFC 8259, section 7;
/// RFC 2781, section 2.2); a surrogate without its partner becomes U+FFFD.
juce::String joinSurrogatePairs(const juce::String& text)
{
    constexpr juce::juce_wchar kReplacement = 0xfffd;
    juce::String out;
    juce::juce_wchar high = 0;
    for (auto p = text.getCharPointer(); !p.isEmpty();)
    {
        const auto c = p.getAndAdvance();
        const bool isHigh = c >= 0xd800 && c <= 0xdbff, isLow = c >= 0xdc00 && c <= 0xdfff;
        if (high != 0 && isLow)
        {
            out << juce::String::charToString(0x10000 + ((high - 0xd800) << 10) + (c - 0xdc00));
            high = 0;
            continue;
        }
        if (high != 0)
            out << juce::String::charToString(kReplacement);
        high = isHigh ? c : 0;
        if (!isHigh)
            out << juce::String::charToString(isLow ? kReplacement : c);
    }
    if (high != 0)
        out << juce::String::charToString(kReplacement);
    return out;
}

/// Deepest nesting of arrays and objects a chain file may use (a chain file needs three:
/// the chain, its stage list, a stage; reflections add two). JUCE's JSON parser recurses
/// once per level, so unbounded nesting would exhaust the stack.
constexpr int kMaxJsonNesting = 32;

/// JUCE 7.0.5's JSON parser reads the whole-number part of every number into a 64-bit
/// integer with no overflow check (juce_JSON.cpp, JSONParser::parseNumber): 19 or more
/// digits overflow, which is undefined behaviour and in practice wraps (2^64 + 1 would read
/// as 1). Its exponent goes through CharacterFunctions::readDoubleValue, which adds up the
/// exponent's significant digits in an int, again unchecked: ten or more overflow. No
/// chain-file field needs such a number, so both are refused before JUCE parses. After a
/// minus sign JUCE takes the next character that is not white space as the first digit,
/// whatever it is ("-x" reads as -72; a letter followed by digits overflows), so a minus
/// sign must be followed by a digit. Nesting deeper than kMaxJsonNesting is refused too.
/// Found by fuzzing (Tests/fuzz/regressions/chain_file). Returns an error or nothing.
juce::String juceJsonHazard(const juce::String& text)
{
    juce::juce_wchar quote = 0, prev = 0, prev2 = 0, beforeRun = 0, beforeSign = 0;
    bool escaped = false, afterMinus = false;
    int line = 1, run = 0, exponentDigits = 0, depth = 0;
    for (auto p = text.getCharPointer(); !p.isEmpty();)
    {
        const auto c = p.getAndAdvance();
        if (c == '\n')
            ++line;
        if (quote != 0) // inside a string (JUCE accepts both quote marks)
        {
            if (escaped)
                escaped = false;
            else if (c == '\\')
                escaped = true;
            else if (c == quote)
                quote = 0;
        }
        else if (afterMinus && !juce::CharacterFunctions::isWhitespace(c) && (c < '0' || c > '9'))
            return "line " + juce::String(line) + ": a minus sign not followed by a digit";
        else if (c == '"' || c == '\'')
            quote = c;
        else if ((c == '[' || c == '{') && ++depth > kMaxJsonNesting)
            return "line " + juce::String(line) + ": arrays and objects nested more than " +
                   juce::String(kMaxJsonNesting) + " deep";
        else if (c == ']' || c == '}')
            --depth;
        else if (c >= '0' && c <= '9')
        {
            if (run++ == 0)
            {
                beforeRun = prev;
                beforeSign = prev2;
            }
            const bool fraction = beforeRun == '.';
            const bool exponent = beforeRun == 'e' || beforeRun == 'E' ||
                                  ((beforeRun == '+' || beforeRun == '-') &&
                                   (beforeSign == 'e' || beforeSign == 'E'));
            if (run == 19 && !fraction && !exponent)
                return "line " + juce::String(line) +
                       ": a number with 19 or more digits before its decimal point";
            if (exponent && (c != '0' || exponentDigits > 0) && ++exponentDigits == 10)
                return "line " + juce::String(line) +
                       ": a number whose exponent has 10 or more digits";
        }
        if (c < '0' || c > '9')
            run = exponentDigits = 0;
        if (quote == 0 && c == '-')
            afterMinus = true;
        else if (!juce::CharacterFunctions::isWhitespace(c))
            afterMinus = false;
        prev2 = prev;
        prev = c;
    }
    return {};
}

} // namespace

ChainReadResult parseChainJson(const juce::String& jsonText)
{
    ChainReadResult r;
    if (const auto hazard = juceJsonHazard(jsonText); hazard.isNotEmpty())
    {
        r.error = "not valid JSON: " + hazard;
        return r;
    }
    juce::var root;
    const auto parsed = juce::JSON::parse(jsonText, root);
    if (parsed.failed())
    {
        r.error = "not valid JSON: " + parsed.getErrorMessage();
        return r;
    }
    auto* obj = root.getDynamicObject();
    if (obj == nullptr || root.isArray())
    {
        r.error = "expected a JSON object with \"format\": \"kerf-chain\"";
        return r;
    }
    if (obj->getProperty("format").toString() != kChainFormatName)
    {
        r.error = "field 'format': expected \"kerf-chain\"";
        return r;
    }
    const auto version = readNumber(obj->getProperty("version"));
    if (!version || *version != std::floor(*version))
    {
        r.error = "field 'version': expected a whole number";
        return r;
    }
    if (*version < 1 || *version > kChainFormatVersion)
    {
        r.error = "field 'version': " + formatNumber(*version) +
                  " is not supported (this Kerf reads version " +
                  juce::String(kChainFormatVersion) + ")";
        return r;
    }
    static const juce::StringArray knownTop{"format", "version", "name", "description", "stages"};
    for (const auto& prop : obj->getProperties())
        if (!knownTop.contains(prop.name.toString()))
        {
            r.error = "field '" + prop.name.toString() +
                      "': unknown top-level field (known: " + knownTop.joinIntoString(", ") + ")";
            return r;
        }
    for (const char* textField : {"name", "description"})
        if (obj->hasProperty(textField) && !obj->getProperty(textField).isString())
        {
            r.error = juce::String("field '") + textField + "': expected a string";
            return r;
        }
    r.name = joinSurrogatePairs(obj->getProperty("name").toString());
    const juce::var stages = obj->getProperty("stages");
    if (!stages.isArray())
    {
        r.error = "field 'stages': expected an array of stage objects";
        return r;
    }
    if (stages.size() > dsp::ChainSpec::kMaxStages)
    {
        r.error = "field 'stages': " + juce::String(stages.size()) + " stages, at most " +
                  juce::String(dsp::ChainSpec::kMaxStages) + " are allowed";
        return r;
    }
    int echoStages = 0, combStages = 0;
    for (int i = 0; i < stages.size(); ++i)
    {
        dsp::StageSpec s;
        const auto err = readStage(stages[i], i, s);
        if (err.isNotEmpty())
        {
            r.error = err;
            return r;
        }
        if (s.type == dsp::StageType::comb && ++combStages > dsp::ChainProcessor::kMaxCombStages)
        {
            r.error = "stage " + juce::String(i) + ", field 'type': at most " +
                      juce::String(dsp::ChainProcessor::kMaxCombStages) +
                      " comb stages in one chain";
            return r;
        }
        if (s.type == dsp::StageType::echoCancel &&
            ++echoStages > dsp::ChainProcessor::kMaxEchoStages)
        {
            r.error = "stage " + juce::String(i) + ", field 'type': at most " +
                      juce::String(dsp::ChainProcessor::kMaxEchoStages) +
                      " echo_cancel stages in one chain";
            return r;
        }
        r.chain.push(s);
    }
    r.ok = true;
    return r;
}

ChainReadResult parseChainBytes(const void* data, std::size_t size)
{
    const auto* b = static_cast<const unsigned char*>(data);
    const bool utf16 =
        size >= 2 && ((b[0] == 0xff && b[1] == 0xfe) || (b[0] == 0xfe && b[1] == 0xff));
    std::size_t nul = size;
    if (utf16)
    {
        for (std::size_t i = 2; i + 1 < size && nul == size; i += 2)
            if (b[i] == 0 && b[i + 1] == 0)
                nul = i;
    }
    else if (const void* z = std::memchr(b, 0, size); z != nullptr)
        nul = static_cast<std::size_t>(static_cast<const unsigned char*>(z) - b);
    if (nul < size)
    {
        ChainReadResult r;
        r.error = "not a text file: a NUL character at byte " + juce::String(nul);
        return r;
    }
    // JUCE steps over the continuation bytes a malformed UTF-8 lead byte announces without
    // looking for the end of the text (CharPointer_UTF8::operator++), so its parser could
    // read past the buffer: UTF-8 must be well-formed (RFC 3629, section 4).
    if (!utf16 && !juce::CharPointer_UTF8::isValidString(
                      static_cast<const char*>(data),
                      static_cast<int>(std::min<std::size_t>(size, 1u << 30))))
    {
        ChainReadResult r;
        r.error = "not UTF-8 text (a malformed byte sequence)";
        return r;
    }
    // As JUCE reads a text stream: UTF-16 by its byte-order mark, otherwise UTF-8.
    juce::MemoryInputStream in(data, size, false);
    return parseChainJson(in.readEntireStreamAsString());
}

ChainReadResult readChainFile(const juce::File& file)
{
    ChainReadResult r;
    if (file.isDirectory())
    {
        r.error = "chain file " + file.getFullPathName() + " is a directory";
        return r;
    }
    if (!file.existsAsFile())
    {
        r.error = "chain file " + file.getFullPathName() + " does not exist";
        return r;
    }
    juce::FileInputStream in(file);
    if (!in.openedOk())
    {
        r.error = "chain file " + file.getFullPathName() +
                  " cannot be read: " + in.getStatus().getErrorMessage();
        return r;
    }
    juce::MemoryBlock bytes;
    in.readIntoMemoryBlock(bytes);
    r = parseChainBytes(bytes.getData(), bytes.getSize());
    if (!r.ok)
        r.error = file.getFileName() + ": " + r.error;
    return r;
}

juce::String chainToJson(const dsp::ChainSpec& chain, const juce::String& name)
{
    // Written by hand for a stable field order and numbers that read back exactly.
    using T = dsp::StageType;
    juce::String out;
    out << "{\n  \"format\": \"" << kChainFormatName
        << "\",\n  \"version\": " << kChainFormatVersion << ",\n";
    if (name.isNotEmpty())
        out << "  \"name\": " << jsonStringLiteral(name) << ",\n";
    out << "  \"stages\": [";
    auto str = [](std::string_view v) { return juce::String(std::string(v)); };
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        const auto fields = fieldsOf(s.type);
        out << (i == 0 ? "\n" : ",\n");
        if (s.type == T::comb)
        {
            const auto& c = s.comb;
            out << "    {\"type\": \"comb\", \"mode\": \""
                << (c.mode == dsp::CombMode::feedback ? "feedback" : "feedforward") << "\"";
            if (c.pitchHz > 0.0)
                out << ", \"pitch_hz\": " << formatNumber(c.pitchHz);
            else
                out << ", \"delay_ms\": " << formatNumber(c.delayMs);
            out << ", \"gain\": " << formatNumber(c.gain);
            if (c.dampingHz > 0.0)
                out << ", \"damping_hz\": " << formatNumber(c.dampingHz);
            out << ", \"mix\": " << formatNumber(c.mix);
            if (c.interpolation == dsp::DelayInterpolation::thiran)
                out << ", \"interpolation\": \"thiran\"";
            if (c.sweepDelay)
                out << ", \"delay_change\": \"sweep\"";
            out << ", \"enabled\": " << (s.enabled ? "true" : "false") << "}";
            continue;
        }
        if (s.type == T::echoCancel)
        {
            out << "    {\"type\": \"echo_cancel\", \"method\": \""
                << (s.echo.method == dsp::EchoMethod::exact ? "exact" : "series") << "\"";
            if (s.echo.method == dsp::EchoMethod::series)
                out << ", \"terms\": " << s.echo.terms;
            out << ", \"reflections\": [";
            for (int k = 0; k < s.echo.numReflections; ++k)
            {
                const auto& r = s.echo.reflections[static_cast<std::size_t>(k)];
                out << (k ? ", " : "") << "{\"delay_ms\": " << formatNumber(r.delayMs)
                    << ", \"gain\": " << formatNumber(r.gain) << "}";
            }
            out << "]";
            if (s.nonCausal)
                out << ", \"non_causal\": true";
            out << ", \"enabled\": " << (s.enabled ? "true" : "false") << "}";
            continue;
        }
        out << "    {\"type\": \"" << str(dsp::stageTypeName(s.type))
            << "\", \"freq_hz\": " << formatNumber(s.freqHz);
        if (fields.contains("gain_db"))
            out << ", \"gain_db\": " << formatNumber(s.gainDb);
        if (fields.contains("slope"))
            out << ", \"slope\": " << formatNumber(s.slope);
        if (fields.contains("order"))
            out << ", \"order\": " << s.order;
        if (fields.contains("alignment"))
            out << ", \"alignment\": \"" << str(dsp::alignmentName(s.alignment)) << "\"";
        const bool passType = s.type == T::highPass || s.type == T::lowPass;
        const bool resonant =
            s.q > 0.0 && s.order == 2 && s.alignment == dsp::PassAlignment::butterworth;
        if (fields.contains("q") && (!passType || resonant))
            out << ", \"q\": " << formatNumber(s.q);
        if (s.channels != dsp::ChannelMode::both)
            out << ", \"channels\": \"" << str(dsp::channelModeName(s.channels)) << "\"";
        if (s.design != dsp::DesignMode::accurate)
            out << ", \"design\": \"" << str(dsp::designModeName(s.design)) << "\"";
        out << ", \"enabled\": " << (s.enabled ? "true" : "false") << "}";
    }
    out << (chain.numStages > 0 ? "\n  ]\n}\n" : "]\n}\n");
    return out;
}

} // namespace kerf
