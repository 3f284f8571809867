#pragma once
// User presets: chain files in a folder of the user's configuration directory, listed,
// saved, loaded and deleted by name. Message thread only (file I/O).
#include "ChainFile.h"

namespace kerf
{

/// Kerf's configuration folder: $XDG_CONFIG_HOME/kerf, or ~/.config/kerf when
/// XDG_CONFIG_HOME is unset, empty or not an absolute path (XDG Base Directory
/// Specification 0.8). User presets and the standalone app's settings live here.
juce::File kerfConfigFolder();

/// The standalone app's settings file is read at every start by JUCE's lenient XML reader,
/// which recurses once per level of nesting and loops for good on some texts (StrictXml.h).
/// A settings file in XML that is not plain is renamed to "<its name>.damaged" (replacing an
/// older one), so the app starts with fresh settings instead of hanging or crashing at every
/// start; returns a line saying so, or nothing. JUCE's binary settings formats are left alone.
juce::String setAsideUnplainSettings(const juce::File& settings);

/// One user preset: the name stored in its chain file, and the file.
struct UserPreset
{
    juce::String name;
    juce::File file;
};

/// The folder of user presets and what can be done with it. Each preset is one chain file
/// (README.md, "Chain files") whose "name" field is the preset's name.
class UserPresetFolder
{
public:
    /// kerfConfigFolder()/presets.
    static juce::File defaultFolder();

    /// A folder to work in (created when the first preset is saved).
    explicit UserPresetFolder(juce::File folder = defaultFolder());

    const juce::File& folder() const noexcept { return dir; }

    /// Every readable preset, sorted by name (case-insensitive). Files that are not chain
    /// files are left out; `problems`, when given, receives one line per such file.
    juce::Array<UserPreset> list(juce::StringArray* problems = nullptr) const;

    /// Whether a preset of that exact name exists.
    bool contains(const juce::String& name) const;

    /// Saves a chain under a name: replaces the preset of that name if there is one, else
    /// writes a new file named after it. The file is written completely, then renamed into
    /// place. Returns an error text, or "" on success.
    juce::String save(const juce::String& name, const dsp::ChainSpec& chain) const;

    /// Reads the preset of that name (ok = false with a reason when there is none).
    ChainReadResult load(const juce::String& name) const;

    /// Deletes the preset of that name. Returns an error text, or "" on success.
    juce::String remove(const juce::String& name) const;

    /// Longest preset name accepted, in characters.
    static constexpr int kMaxNameLength = 100;

private:
    juce::File fileOf(const juce::String& name) const; // existing file, or a null File
    juce::File dir;
};

} // namespace kerf
