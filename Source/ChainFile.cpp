#include "ChainFile.h"

#include "Limits.h"

#include <charconv>
#include <cmath>
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

juce::String readStage(const juce::var& v, int index, dsp::StageSpec& out)
{
    const juce::String where = "stage " + juce::String(index);
    auto* obj = v.getDynamicObject();
    if (obj == nullptr || v.isArray())
        return where + ": expected an object like {\"type\": \"peaking\", ...}";

    if (!obj->hasProperty("type"))
        return where + ", field 'type': missing (known types: peaking)";
    const juce::var typeVar = obj->getProperty("type");
    if (!typeVar.isString())
        return where + ", field 'type': expected a string (known types: peaking)";
    const juce::String type = typeVar.toString();

    dsp::StageSpec s;
    if (type == "peaking")
    {
        s.type = dsp::StageType::peaking;
        using namespace dsp::limits;
        for (auto [field, lo, hi, fallback, target] :
             {std::tuple{"freq_hz", kFreqMinHz, kFreqMaxHz, std::optional<double>{}, &s.freqHz},
              std::tuple{"gain_db", kGainMinDb, kGainMaxDb, std::optional<double>{0.0}, &s.gainDb},
              std::tuple{"q", kQMin, kQMax, std::optional<double>{1.0}, &s.q}})
        {
            auto err = readRanged(*obj, field, lo, hi, fallback, where, *target);
            if (err.isNotEmpty())
                return err;
        }
    }
    else
    {
        return where + ", field 'type': unknown type \"" + type + "\" (known types: peaking)";
    }

    if (obj->hasProperty("enabled"))
    {
        const juce::var e = obj->getProperty("enabled");
        if (!e.isBool())
            return where + ", field 'enabled': expected true or false";
        s.enabled = static_cast<bool>(e);
    }

    static const juce::StringArray known{"type", "enabled", "freq_hz", "gain_db", "q"};
    for (const auto& prop : obj->getProperties())
        if (!known.contains(prop.name.toString()))
            return where + ", field '" + prop.name.toString() + "': unknown field for type " +
                   type + " (known: " + known.joinIntoString(", ") + ")";
    out = s;
    return {};
}

} // namespace

ChainReadResult parseChainJson(const juce::String& jsonText)
{
    ChainReadResult r;
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
    r.name = obj->getProperty("name").toString();
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
    for (int i = 0; i < stages.size(); ++i)
    {
        dsp::StageSpec s;
        const auto err = readStage(stages[i], i, s);
        if (err.isNotEmpty())
        {
            r.error = err;
            return r;
        }
        r.chain.push(s);
    }
    r.ok = true;
    return r;
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
    r = parseChainJson(in.readEntireStreamAsString());
    if (!r.ok)
        r.error = file.getFileName() + ": " + r.error;
    return r;
}

juce::String chainToJson(const dsp::ChainSpec& chain, const juce::String& name)
{
    // Written by hand for a stable field order and readable numbers.
    juce::String out;
    out << "{\n  \"format\": \"" << kChainFormatName
        << "\",\n  \"version\": " << kChainFormatVersion << ",\n";
    if (name.isNotEmpty())
        out << "  \"name\": " << juce::JSON::toString(name) << ",\n";
    out << "  \"stages\": [";
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        out << (i == 0 ? "\n" : ",\n");
        out << "    {\"type\": \"" << juce::String(std::string(dsp::stageTypeName(s.type)))
            << "\", \"freq_hz\": " << formatNumber(s.freqHz)
            << ", \"gain_db\": " << formatNumber(s.gainDb) << ", \"q\": " << formatNumber(s.q)
            << ", \"enabled\": " << (s.enabled ? "true" : "false") << "}";
    }
    out << (chain.numStages > 0 ? "\n  ]\n}\n" : "]\n}\n");
    return out;
}

} // namespace kerf
