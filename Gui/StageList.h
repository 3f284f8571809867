#pragma once
// The editor's stage list: one row per stage slot of the chain, in processing order (the echo
// stage, the 24 section slots, the two comb slots), then the output row; each row holds the
// slot's switch, its type and its values, bound to the processor's parameters.
#include <juce_audio_processors/juce_audio_processors.h>
#include <juce_gui_basics/juce_gui_basics.h>

#include <functional>
#include <memory>
#include <vector>

namespace kerf
{

class SectionHandles;

/// A scrolling list of rows. Every control is bound to its parameter with JUCE's parameter
/// attachments (one click, choice, typed value or drag is one begin/endChangeGesture: one
/// undo step, one automation gesture); the comb rows' note controls set the pitch parameter
/// the same way. A row whose slot is off is one compact line; a row that is on shows the
/// values its type uses. Clicking a row (or focusing one of its controls) selects it; a
/// selected section row selects that section's handle on the response display and the
/// handle's keyboard selection selects its row (linkHandles).
class StageList : public juce::Component, private juce::Timer
{
public:
    /// What a row stands for.
    enum class Kind
    {
        echo,
        section,
        comb,
        output,
    };

    explicit StageList(juce::AudioProcessorValueTreeState& state);
    ~StageList() override;

    /// Follows and drives the selection of the response display's section handles
    /// (nullptr to unlink). The handles must outlive this or be unlinked first.
    void linkHandles(SectionHandles* handles);

    int numRows() const noexcept { return static_cast<int>(rows.size()); }
    Kind rowKind(int row) const;
    /// The slot a row stands for (section and comb slots from 0; 0 for echo and output).
    int rowSlot(int row) const;
    /// The row of a slot, or -1.
    int rowOf(Kind kind, int slot) const;
    /// The selected row, or -1.
    int selectedRow() const noexcept { return selected; }
    /// Selects a row (highlighted, scrolled into view; a section row also selects its
    /// handle when the section is on). -1 clears the selection.
    void selectRow(int row);
    /// Whether a row shows its values (its slot is on) or is one compact line.
    bool rowExpanded(int row) const;

    /// The control with this component ID: a parameter's ID ("sec03_gain", "comb1_pitch",
    /// "echo_method", "out_gain"), or a comb's note controls "comb1_noteText",
    /// "comb1_noteName", "comb1_noteOctave", "comb1_cents". nullptr when there is none.
    juce::Component* controlFor(const juce::String& componentId) const;
    /// The scrolling view (its content holds the rows).
    juce::Viewport& viewport() noexcept { return view; }

    /// What the 10 Hz timer does: lays the rows out again when a slot switched on or off or
    /// changed type, updates the comb rows' note readouts, and follows the handles'
    /// selection.
    void refresh();

    void resized() override;
    void paint(juce::Graphics& g) override;
    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override;

    /// Height of one line of controls, px.
    static constexpr int kLineHeight = 26;

    class Row;

private:
    void timerCallback() override { refresh(); }
    void layoutRows();
    void rowClicked(Row& row);

    juce::AudioProcessorValueTreeState& params;
    class ScrollingView;
    std::unique_ptr<juce::Viewport> viewHolder;
    juce::Viewport& view;
    juce::Component content;
    std::vector<std::unique_ptr<Row>> rows;
    int selected = -1;
    SectionHandles* handles = nullptr;
    int lastHandleSelection = -1;

    JUCE_DECLARE_NON_COPYABLE_WITH_LEAK_DETECTOR(StageList)
};

} // namespace kerf
