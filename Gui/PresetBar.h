#pragma once
// The editor's preset bar: factory and user presets (load, save as, delete), the A/B switch,
// undo and redo, "all flat", and the output-protection indicator.
#include <juce_gui_basics/juce_gui_basics.h>

namespace kerf
{

class KerfProcessor;

/// One row of session controls over the processor's own API (KerfProcessor): presets load as
/// one undo step each (setCurrentProgram for factory presets, loadUserPreset for user
/// presets), "Save as" writes a user preset under a typed name, "Delete" removes the chosen
/// user preset after a second click. Component IDs: "preset", "saveAs", "presetName",
/// "deletePreset", "undo", "redo", "compare", "allFlat", "protection".
class PresetBar : public juce::Component, private juce::Timer
{
public:
    explicit PresetBar(KerfProcessor& processor);
    ~PresetBar() override;

    /// Preset box item IDs: kFlatId is the "Flat" program, kFactoryBase + i factory preset i
    /// (program i + 1), kUserBase + i the i-th user preset in the folder's listing.
    static constexpr int kFlatId = 1, kFactoryBase = 2, kUserBase = 10000;

    /// Reads the user-preset folder again and rebuilds the preset box (keeps the choice).
    void refreshPresetList();
    /// Loads a preset box entry (one undo step). Returns an error text or "".
    juce::String loadEntry(int itemId);
    /// Saves the current settings as a user preset, lists it and shows it as chosen.
    /// Returns an error text or "" (also shown in the bar).
    juce::String saveAs(const juce::String& name);
    /// Deletes the chosen user preset at once (the button asks for a second click first).
    juce::String deleteChosen();
    /// The user preset shown in the box, or "" when the box shows a factory preset or none.
    juce::String chosenUserPreset() const;

    /// What the 30 Hz timer does: enables undo/redo with the step names, names the active
    /// A/B slot, and lights the protection indicator while the protection acts (held 1 s).
    void refresh();
    /// Whether the indicator shows the protection acting now.
    bool protectionActing() const noexcept { return holdFrames > 0; }
    /// The status line (the last save/delete/load result).
    juce::String status() const { return statusLabel.getText(); }

    /// Below this width the bar takes two lines: session buttons, status and indicator
    /// above, the preset box and its actions below. Heights in px.
    static constexpr int kOneLineWidth = 650, kLineHeight = 34;
    /// The height the bar wants at a width: one line, or two below kOneLineWidth.
    static int preferredHeight(int width) noexcept;

    void resized() override;
    void paint(juce::Graphics& g) override;
    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override;

private:
    void timerCallback() override { refresh(); }
    void showNameField(bool show);
    void setStatus(const juce::String& text, bool problem);

    KerfProcessor& processor;
    juce::ComboBox presetBox;
    juce::TextButton saveButton{"Save as..."}, deleteButton{"Delete"};
    juce::TextEditor nameField;
    juce::Label statusLabel;
    juce::TextButton undoButton{"Undo"}, redoButton{"Redo"}, compareButton{"A/B: A"},
        flatButton{"All flat"};
    juce::Label protectionLabel;
    int holdFrames = 0;
    int deleteArmedFrames = 0;
    int statusFrames = 0;
    int shownProgram = 0;        // the processor's program the box last followed
    juce::StringArray userNames; // in the box's order

    JUCE_DECLARE_NON_COPYABLE_WITH_LEAK_DETECTOR(PresetBar)
};

} // namespace kerf
