#include "UserPresets.h"

#include "StrictXml.h"

#include <algorithm>

namespace kerf
{

namespace
{
/// A file name for a preset name: letters, digits, space, '-', '_' and '.' kept, anything
/// else (path separators included) replaced by '_'; never starting with '.'.
juce::String fileStemFor(const juce::String& name)
{
    juce::String stem;
    for (auto c : name)
        stem << (juce::CharacterFunctions::isLetterOrDigit(c) || c == ' ' || c == '-' || c == '_' ||
                         c == '.'
                     ? c
                     : static_cast<juce::juce_wchar>('_'));
    stem = stem.trim();
    while (stem.startsWithChar('.'))
        stem = "_" + stem.substring(1);
    return stem.isEmpty() ? juce::String("preset") : stem;
}

juce::String checkName(const juce::String& name)
{
    if (name.trim().isEmpty())
        return "a preset needs a name";
    if (name != name.trim())
        return "a preset name cannot start or end with spaces";
    if (name.length() > UserPresetFolder::kMaxNameLength)
        return "a preset name has at most " + juce::String(UserPresetFolder::kMaxNameLength) +
               " characters";
    return {};
}
} // namespace

juce::File kerfConfigFolder()
{
    // XDG Base Directory Specification 0.8: "If $XDG_CONFIG_HOME is either not set or empty,
    // a default equal to $HOME/.config should be used"; relative paths are to be ignored.
    const auto xdg = juce::SystemStats::getEnvironmentVariable("XDG_CONFIG_HOME", {});
    const auto base =
        xdg.isNotEmpty() && juce::File::isAbsolutePath(xdg)
            ? juce::File(xdg)
            : juce::File::getSpecialLocation(juce::File::userHomeDirectory).getChildFile(".config");
    return base.getChildFile("kerf");
}

juce::String setAsideUnplainSettings(const juce::File& settings)
{
    juce::MemoryBlock data;
    if (!settings.existsAsFile() || !settings.loadFileAsData(data))
        return {};
    const auto* text = static_cast<const char*>(data.getData());
    std::size_t start = 0;
    while (start < data.getSize() && juce::CharacterFunctions::isWhitespace(text[start]))
        ++start;
    if (start == data.getSize() || text[start] != '<')
        return {}; // empty, or JUCE's binary form
    const auto problem = plainXmlProblem(text, data.getSize());
    if (problem.empty())
        return {};
    const auto aside = settings.getSiblingFile(settings.getFileName() + ".damaged");
    if (!settings.moveFileTo(aside))
        return "Kerf: the settings file " + settings.getFullPathName() +
               " is damaged (its XML has " + juce::String(problem) +
               ") and could not be moved aside";
    return "Kerf: the settings file " + settings.getFullPathName() + " was damaged (its XML has " +
           juce::String(problem) + "); moved to " + aside.getFullPathName() +
           ", starting with fresh settings";
}

juce::File UserPresetFolder::defaultFolder()
{
    return kerfConfigFolder().getChildFile("presets");
}

UserPresetFolder::UserPresetFolder(juce::File folder) : dir(std::move(folder)) {}

juce::Array<UserPreset> UserPresetFolder::list(juce::StringArray* problems) const
{
    juce::Array<UserPreset> presets;
    if (!dir.isDirectory())
        return presets;
    for (const auto& file : dir.findChildFiles(juce::File::findFiles, false, "*.json"))
    {
        const auto parsed = readChainFile(file);
        if (!parsed.ok)
        {
            if (problems != nullptr)
                problems->add(file.getFileName() + ": " + parsed.error);
            continue;
        }
        presets.add(
            {parsed.name.isNotEmpty() ? parsed.name : file.getFileNameWithoutExtension(), file});
    }
    std::sort(presets.begin(), presets.end(),
              [](const UserPreset& a, const UserPreset& b)
              {
                  const int c = a.name.compareIgnoreCase(b.name);
                  return c != 0 ? c < 0 : a.name < b.name;
              });
    return presets;
}

juce::File UserPresetFolder::fileOf(const juce::String& name) const
{
    for (const auto& p : list())
        if (p.name == name)
            return p.file;
    return {};
}

bool UserPresetFolder::contains(const juce::String& name) const
{
    return fileOf(name) != juce::File();
}

juce::String UserPresetFolder::save(const juce::String& name, const dsp::ChainSpec& chain) const
{
    if (auto problem = checkName(name); problem.isNotEmpty())
        return problem;
    if (!dir.isDirectory())
        if (const auto made = dir.createDirectory(); made.failed())
            return "cannot create the preset folder " + dir.getFullPathName() + ": " +
                   made.getErrorMessage();
    auto target = fileOf(name);
    if (target == juce::File())
    {
        target = dir.getChildFile(fileStemFor(name) + ".json");
        if (target.exists()) // another preset's file (a different name, the same stem)
            target = target.getNonexistentSibling(true);
    }
    // Written to a temporary file beside the target, then renamed over it: a failure never
    // leaves a half-written preset.
    juce::TemporaryFile temp(target);
    if (!temp.getFile().replaceWithText(chainToJson(chain, name)))
        return "cannot write " + temp.getFile().getFullPathName();
    if (!temp.overwriteTargetFileWithTemporary())
        return "cannot write " + target.getFullPathName();
    return {};
}

ChainReadResult UserPresetFolder::load(const juce::String& name) const
{
    const auto file = fileOf(name);
    if (file == juce::File())
    {
        ChainReadResult r;
        r.error = "there is no user preset named '" + name + "' in " + dir.getFullPathName();
        return r;
    }
    return readChainFile(file);
}

juce::String UserPresetFolder::remove(const juce::String& name) const
{
    const auto file = fileOf(name);
    if (file == juce::File())
        return "there is no user preset named '" + name + "' in " + dir.getFullPathName();
    if (!file.deleteFile())
        return "cannot delete " + file.getFullPathName();
    return {};
}

} // namespace kerf
