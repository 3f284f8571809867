#pragma once
// The editor's list of every parameter: one row per parameter (a toggle, a choice box or a
// slider with its value), grouped as the parameter layout groups them, in a scrolling view.
#include <juce_audio_processors/juce_audio_processors.h>
#include <juce_gui_basics/juce_gui_basics.h>

#include <memory>
#include <vector>

namespace kerf
{

/// The one-line explanation of a parameter (its tooltip and accessibility help), from its ID;
/// empty for an ID it does not know (the editor's accessibility test then fails, so a new
/// parameter cannot arrive without one).
juce::String parameterTooltip(const juce::String& parameterId);

/// Every automatable parameter of a processor as a row: a toggle button for on/off
/// parameters, a combo box for choices, a horizontal slider with an editable value box for
/// the rest. The controls are bound with JUCE's parameter attachments, so each drag, click,
/// choice or typed value is one begin/endChangeGesture (one undo step, one automation
/// gesture). Each control carries the parameter's name as its accessibility title and
/// parameterTooltip() as tooltip; sliders take keyboard focus (arrow keys step them). The
/// mouse wheel scrolls the list and never changes a value.
class ParameterPanel : public juce::Component
{
public:
    explicit ParameterPanel(juce::AudioProcessor& processor);
    ~ParameterPanel() override;

    void resized() override;
    void paint(juce::Graphics& g) override;

    /// The control bound to a parameter ID, or nullptr.
    juce::Component* controlFor(const juce::String& parameterId) const;
    /// Row height and the name column's width, px.
    static constexpr int kRowHeight = 26, kHeadingHeight = 22, kNameWidth = 190;

private:
    struct Row;
    class Content;
    class ScrollingView;
    std::vector<std::unique_ptr<Row>> rows;
    std::unique_ptr<Content> content;
    std::unique_ptr<ScrollingView> viewport;
};

} // namespace kerf
