#include "PresetBar.h"

#include "FactoryPresets.h"
#include "PluginProcessor.h"

#include <cmath>
#include <vector>

namespace kerf
{

namespace
{
const juce::Colour kSand(0xffd8cbb0);
const juce::Colour kWarm(0xfff2a65a);
const juce::Colour kProblem(0xffe07a6a);

void describe(juce::Component& c, const juce::String& id, const juce::String& title,
              const juce::String& tip)
{
    c.setComponentID(id);
    c.setTitle(title);
    c.setHelpText(tip);
    if (auto* t = dynamic_cast<juce::SettableTooltipClient*>(&c))
        t->setTooltip(tip);
    c.setWantsKeyboardFocus(true);
    // Inner parts a user can reach (a combo box's label) carry the same description.
    for (auto* child : c.getChildren())
    {
        child->setTitle(title);
        if (auto* t = dynamic_cast<juce::SettableTooltipClient*>(child))
            t->setTooltip(tip);
    }
}
} // namespace

PresetBar::PresetBar(KerfProcessor& p) : processor(p)
{
    setComponentID("presetBar");
    setTitle("Preset bar");
    describe(presetBox, "preset", "Preset", "Loads a factory or user preset (one undo step)");
    presetBox.setTextWhenNothingSelected("Presets");
    presetBox.onChange = [this]
    {
        const int id = presetBox.getSelectedId();
        if (id != 0)
            loadEntry(id);
    };
    describe(saveButton, "saveAs", "Save as user preset",
             "Saves these settings as a user preset under a name you type");
    saveButton.onClick = [this] { showNameField(!nameField.isVisible()); };
    describe(nameField, "presetName", "User preset name",
             "The new preset's name: Enter saves, Escape cancels (a preset of the same name "
             "is replaced)");
    nameField.setTextToShowWhenEmpty("name, then Enter", kSand.withAlpha(0.5f));
    nameField.onReturnKey = [this]
    {
        if (saveAs(nameField.getText()).isEmpty())
            showNameField(false);
    };
    nameField.onEscapeKey = [this] { showNameField(false); };
    describe(deleteButton, "deletePreset", "Delete user preset",
             "Deletes the chosen user preset file (click twice)");
    deleteButton.onClick = [this]
    {
        if (deleteArmedFrames > 0)
        {
            deleteChosen();
            return;
        }
        deleteArmedFrames = 90; // three seconds to confirm
        deleteButton.setButtonText("Sure?");
        setStatus("Click Delete again to remove \"" + chosenUserPreset() + "\"", false);
    };
    statusLabel.setColour(juce::Label::textColourId, kSand);
    statusLabel.setInterceptsMouseClicks(false, false);

    describe(undoButton, "undo", "Undo", "Nothing to undo");
    describe(redoButton, "redo", "Redo", "Nothing to redo");
    describe(compareButton, "compare", "A/B switch",
             "A/B: keeps these settings in the active slot and loads the other (at first a "
             "copy of these)");
    describe(flatButton, "allFlat", "All flat",
             "Switches every section, comb and echo stage off at once; output gain and "
             "protection stay (undo brings the stages back)");
    undoButton.onClick = [this] { processor.undo(); };
    redoButton.onClick = [this] { processor.redo(); };
    compareButton.onClick = [this] { processor.switchSlot(); };
    flatButton.onClick = [this] { processor.setAllFlat(); };

    protectionLabel.setComponentID("protection");
    protectionLabel.setTitle("Output protection");
    protectionLabel.setJustificationType(juce::Justification::centred);

    for (auto* c : std::initializer_list<juce::Component*>{
             &presetBox, &saveButton, &deleteButton, &statusLabel, &undoButton, &redoButton,
             &compareButton, &flatButton, &protectionLabel})
        addAndMakeVisible(c);
    addChildComponent(nameField);
    refreshPresetList();
    shownProgram = processor.getCurrentProgram(); // "Flat" at first says nothing of the state
    refresh();
    startTimerHz(30);
}

PresetBar::~PresetBar()
{
    stopTimer();
}

void PresetBar::refreshPresetList()
{
    const int chosen = presetBox.getSelectedId();
    const auto chosenUser = chosenUserPreset();
    presetBox.clear(juce::dontSendNotification);
    presetBox.addSectionHeading("Factory");
    presetBox.addItem(processor.getProgramName(0), kFlatId);
    const auto& factory = factoryPresets();
    for (int i = 0; i < factory.size(); ++i)
        presetBox.addItem(factory[i].name, kFactoryBase + i);
    userNames.clear();
    for (const auto& u : processor.userPresets().list())
        userNames.add(u.name);
    if (!userNames.isEmpty())
    {
        presetBox.addSeparator();
        presetBox.addSectionHeading("User");
        for (int i = 0; i < userNames.size(); ++i)
            presetBox.addItem(userNames[i], kUserBase + i);
    }
    // Keep the choice: a user preset by name (its index may have moved), else the id.
    int keep = chosen < kUserBase ? chosen : 0;
    if (chosenUser.isNotEmpty() && userNames.contains(chosenUser))
        keep = kUserBase + userNames.indexOf(chosenUser);
    presetBox.setSelectedId(keep, juce::dontSendNotification);
    deleteButton.setEnabled(chosenUserPreset().isNotEmpty());
}

juce::String PresetBar::chosenUserPreset() const
{
    const int id = presetBox.getSelectedId();
    return id >= kUserBase ? userNames[id - kUserBase] : juce::String();
}

juce::String PresetBar::loadEntry(int itemId)
{
    juce::String error;
    if (itemId == kFlatId)
        processor.setCurrentProgram(0);
    else if (itemId >= kFactoryBase && itemId < kUserBase)
        processor.setCurrentProgram(itemId - kFactoryBase + 1);
    else if (itemId >= kUserBase && itemId - kUserBase < userNames.size())
        error = processor.loadUserPreset(userNames[itemId - kUserBase]);
    else
        error = "no such preset";
    shownProgram = processor.getCurrentProgram();
    presetBox.setSelectedId(itemId, juce::dontSendNotification);
    deleteButton.setEnabled(chosenUserPreset().isNotEmpty());
    setStatus(error.isEmpty() ? juce::String() : "Not loaded: " + error, error.isNotEmpty());
    return error;
}

juce::String PresetBar::saveAs(const juce::String& name)
{
    const auto error = processor.saveUserPreset(name);
    if (error.isNotEmpty())
    {
        setStatus("Not saved: " + error, true);
        return error;
    }
    refreshPresetList();
    if (userNames.contains(name))
        presetBox.setSelectedId(kUserBase + userNames.indexOf(name), juce::dontSendNotification);
    deleteButton.setEnabled(chosenUserPreset().isNotEmpty());
    setStatus("Saved \"" + name + "\"", false);
    return {};
}

juce::String PresetBar::deleteChosen()
{
    deleteArmedFrames = 0;
    deleteButton.setButtonText("Delete");
    const auto name = chosenUserPreset();
    if (name.isEmpty())
        return "no user preset chosen";
    const auto error = processor.deleteUserPreset(name);
    presetBox.setSelectedId(0, juce::dontSendNotification);
    refreshPresetList();
    setStatus(error.isEmpty() ? "Deleted \"" + name + "\"" : "Not deleted: " + error,
              error.isNotEmpty());
    return error;
}

void PresetBar::showNameField(bool show)
{
    nameField.setVisible(show);
    if (show)
    {
        nameField.setText(chosenUserPreset(), juce::dontSendNotification);
        if (isShowing())
            nameField.grabKeyboardFocus();
    }
    resized();
}

void PresetBar::setStatus(const juce::String& text, bool problem)
{
    statusLabel.setText(text, juce::dontSendNotification);
    statusLabel.setColour(juce::Label::textColourId, problem ? kProblem : kSand);
    statusLabel.setTooltip(text);
    statusFrames = text.isEmpty() ? 0 : 150; // shown for five seconds
}

void PresetBar::refresh()
{
    // A program the host chose (or undo/redo of a preset load) shows in the box.
    if (const int program = processor.getCurrentProgram(); program != shownProgram)
    {
        shownProgram = program;
        presetBox.setSelectedId(program == 0 ? kFlatId : kFactoryBase + program - 1,
                                juce::dontSendNotification);
        deleteButton.setEnabled(chosenUserPreset().isNotEmpty());
    }
    auto& history = processor.history();
    undoButton.setEnabled(history.canUndo());
    redoButton.setEnabled(history.canRedo());
    undoButton.setTooltip(history.canUndo() ? "Undo: " + history.undoName() : "Nothing to undo");
    redoButton.setTooltip(history.canRedo() ? "Redo: " + history.redoName() : "Nothing to redo");
    compareButton.setButtonText(processor.activeSlot() == CompareSlot::a ? "A/B: A" : "A/B: B");

    if (deleteArmedFrames > 0 && --deleteArmedFrames == 0)
        deleteButton.setButtonText("Delete");
    if (statusFrames > 0 && --statusFrames == 0)
        statusLabel.setText({}, juce::dontSendNotification);

    // The protection indicator: dim while it stands by, lit while it acts (held a second).
    if (processor.takeProtectionCount() > 0)
        holdFrames = 30;
    else if (holdFrames > 0)
        --holdFrames;
    const auto* on = processor.state().getRawParameterValue(ids::protectOn);
    const auto* ceiling = processor.state().getRawParameterValue(ids::protectCeiling);
    const bool protecting = on != nullptr && on->load() > 0.5f;
    const juce::String ceilingText =
        ceiling != nullptr ? juce::String(ceiling->load(), 1) + " dB" : juce::String();
    juce::String text, tip;
    juce::Colour colour = kSand.withAlpha(0.55f);
    if (holdFrames > 0)
    {
        text = "ceiling acting";
        tip = "The output protection is limiting peaks at its ceiling (" + ceilingText + ")";
        colour = kWarm;
    }
    else if (protecting)
    {
        text = "ceiling " + ceilingText;
        tip = "The output protection stands by: peaks above " + ceilingText + " are limited";
    }
    else
    {
        text = "protection off";
        tip = "The output protection is off: nothing limits the output's peaks";
    }
    if (protectionLabel.getText() != text)
        protectionLabel.setText(text, juce::dontSendNotification);
    protectionLabel.setColour(juce::Label::textColourId, colour);
    protectionLabel.setTooltip(tip);
    protectionLabel.setHelpText(tip);
}

int PresetBar::preferredHeight(int width) noexcept
{
    return width >= kOneLineWidth ? kLineHeight : 2 * kLineHeight - 4;
}

namespace
{
struct Slot
{
    juce::Component* c;
    int width; // wanted; 0 = takes what is left
};

/// Places slots left to right on a line: the flexible one (width 0) takes what the others
/// leave, at least `minFlexible`; when even that does not fit, every slot shrinks in
/// proportion, so nothing leaves the line.
void placeSlots(juce::Rectangle<int> line, const std::vector<Slot>& slots, int minFlexible)
{
    constexpr int gap = 4;
    int fixed = 0;
    bool flexible = false;
    for (const auto& slot : slots)
    {
        fixed += slot.width + gap;
        flexible = flexible || slot.width == 0;
    }
    const int left = line.getWidth() - fixed;
    const int flexWidth = flexible ? juce::jmax(minFlexible, left) : 0;
    const int total = fixed + flexWidth;
    const double scale =
        total > line.getWidth() && total > 0 ? line.getWidth() / static_cast<double>(total) : 1.0;
    for (const auto& slot : slots)
    {
        const int w = slot.width == 0 ? flexWidth : slot.width;
        slot.c->setBounds(line.removeFromLeft(static_cast<int>(std::floor(w * scale))));
        line.removeFromLeft(static_cast<int>(std::floor(gap * scale)));
    }
}
} // namespace

void PresetBar::resized()
{
    // One line when wide enough: the session buttons, the preset box and its actions, the
    // status line, the protection indicator and All flat. Narrower, the preset box and its
    // actions take a second line.
    auto area = getLocalBounds().reduced(4, 2);
    std::vector<Slot> presetSlots{{&presetBox, 0}};
    if (nameField.isVisible())
        presetSlots.push_back({&nameField, 150});
    presetSlots.push_back({&saveButton, 72});
    presetSlots.push_back({&deleteButton, 58});
    const std::vector<Slot> session{{&undoButton, 52}, {&redoButton, 52}, {&compareButton, 58}};
    const std::vector<Slot> right{{&protectionLabel, 108}, {&flatButton, 68}};
    if (getHeight() >= 2 * kLineHeight - 4)
    {
        auto first = area.removeFromTop(area.getHeight() / 2);
        std::vector<Slot> line = session;
        line.push_back({&statusLabel, 0});
        line.insert(line.end(), right.begin(), right.end());
        placeSlots(first.reduced(0, 2), line, 0);
        placeSlots(area.reduced(0, 2), presetSlots, 120);
        return;
    }
    std::vector<Slot> line = session;
    line.insert(line.end(), presetSlots.begin(), presetSlots.end());
    line.push_back({&statusLabel, 0});
    line.insert(line.end(), right.begin(), right.end());
    // The preset box takes 140 to 260 px of what the others leave; the status line the rest.
    int others = 0;
    for (const auto& slot : line)
        others += slot.width + 4;
    for (auto& slot : line)
        if (slot.c == &presetBox)
            slot.width = juce::jlimit(140, 260, area.getWidth() - others);
    placeSlots(area.reduced(0, 2), line, 0);
}

std::unique_ptr<juce::AccessibilityHandler> PresetBar::createAccessibilityHandler()
{
    return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
}

void PresetBar::paint(juce::Graphics& g)
{
    g.fillAll(juce::Colour(0xff181e24));
}

} // namespace kerf
