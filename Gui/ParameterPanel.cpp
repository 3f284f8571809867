#include "ParameterPanel.h"

namespace kerf
{

namespace
{
const juce::Colour kSand(0xffd8cbb0);

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

/// One row: a group heading, or a parameter's name and control.
struct ParameterPanel::Row
{
    juce::Label name;
    std::unique_ptr<juce::Component> control;
    juce::String parameterId;
    bool heading = false;
    std::unique_ptr<juce::SliderParameterAttachment> sliderAttachment;
    std::unique_ptr<juce::ButtonParameterAttachment> buttonAttachment;
    std::unique_ptr<juce::ComboBoxParameterAttachment> boxAttachment;
};

/// Holds the rows (the viewport's content).
class ParameterPanel::Content : public juce::Component
{
public:
    explicit Content(std::vector<std::unique_ptr<Row>>& r) : rows(r) {}

    int heightFor() const
    {
        int h = 4;
        for (const auto& row : rows)
            h += row->heading ? kHeadingHeight + 6 : kRowHeight;
        return h + 4;
    }

    void resized() override
    {
        int y = 4;
        for (const auto& row : rows)
        {
            if (row->heading)
            {
                y += 6;
                row->name.setBounds(6, y, getWidth() - 12, kHeadingHeight);
                y += kHeadingHeight;
                continue;
            }
            auto area = juce::Rectangle<int>(0, y, getWidth(), kRowHeight).reduced(6, 2);
            row->name.setBounds(area.removeFromLeft(std::min(kNameWidth, area.getWidth() / 2)));
            area.removeFromLeft(6);
            if (dynamic_cast<juce::ToggleButton*>(row->control.get()) != nullptr)
                area = area.withWidth(std::min(area.getWidth(), 40));
            else if (dynamic_cast<juce::ComboBox*>(row->control.get()) != nullptr)
                area = area.withWidth(std::min(area.getWidth(), 240));
            row->control->setBounds(area);
            y += kRowHeight;
        }
    }

private:
    std::vector<std::unique_ptr<Row>>& rows;
};

/// A viewport (it takes keyboard focus: arrows and page keys scroll) whose scroll bars carry
/// a title and a tooltip like every other control.
class ParameterPanel::ScrollingView : public juce::Viewport, public juce::SettableTooltipClient
{
public:
    ScrollingView()
    {
        // Scroll bars are created by the base constructor before this class exists:
        // ask for them again so ours are made.
        recreateScrollbars();
        setScrollBarsShown(true, false);
        setTitle("Parameter list");
        setTooltip("Every parameter; the mouse wheel, the scroll bar or the arrow keys scroll it");
    }

    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override
    {
        return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
    }

private:
    struct Bar : juce::ScrollBar, juce::SettableTooltipClient
    {
        explicit Bar(bool vertical) : juce::ScrollBar(vertical)
        {
            setTitle(vertical ? "Parameter list, vertical scroll"
                              : "Parameter list, horizontal scroll");
            setTooltip("Scrolls the list of every parameter (the mouse wheel scrolls it too)");
        }
    };
    juce::ScrollBar* createScrollBarComponent(bool isVertical) override
    {
        return new Bar(isVertical);
    }
};

ParameterPanel::ParameterPanel(juce::AudioProcessor& processor)
{
    auto addHeading = [this](const juce::String& text)
    {
        auto row = std::make_unique<Row>();
        row->heading = true;
        row->name.setText(text, juce::dontSendNotification);
        row->name.setFont(juce::Font(14.0f, juce::Font::bold));
        row->name.setColour(juce::Label::textColourId, kSand);
        rows.push_back(std::move(row));
    };
    auto addParameter = [this](juce::AudioProcessorParameter& parameter)
    {
        auto* ranged = dynamic_cast<juce::RangedAudioParameter*>(&parameter);
        if (ranged == nullptr || !parameter.isAutomatable())
            return;
        auto row = std::make_unique<Row>();
        row->parameterId = ranged->getParameterID();
        const auto name = parameter.getName(128);
        row->name.setText(name, juce::dontSendNotification);
        row->name.setJustificationType(juce::Justification::centredRight);
        row->name.setColour(juce::Label::textColourId, kSand.withAlpha(0.9f));
        const auto tip = parameterTooltip(row->parameterId);
        if (parameter.isBoolean())
        {
            auto button = std::make_unique<juce::ToggleButton>();
            button->setTooltip(tip);
            row->buttonAttachment =
                std::make_unique<juce::ButtonParameterAttachment>(*ranged, *button);
            row->control = std::move(button);
        }
        else if (auto* choice = dynamic_cast<juce::AudioParameterChoice*>(ranged))
        {
            auto box = std::make_unique<juce::ComboBox>();
            box->addItemList(choice->choices, 1);
            box->setTooltip(tip);
            row->boxAttachment = std::make_unique<juce::ComboBoxParameterAttachment>(*ranged, *box);
            row->control = std::move(box);
        }
        else
        {
            auto slider = std::make_unique<juce::Slider>(juce::Slider::LinearHorizontal,
                                                         juce::Slider::TextBoxRight);
            slider->setTextBoxStyle(juce::Slider::TextBoxRight, false, 110, kRowHeight - 6);
            slider->setScrollWheelEnabled(false); // the wheel scrolls the list
            slider->setWantsKeyboardFocus(true);
            slider->setDoubleClickReturnValue(true,
                                              ranged->convertFrom0to1(ranged->getDefaultValue()));
            slider->setTooltip(tip);
            row->sliderAttachment =
                std::make_unique<juce::SliderParameterAttachment>(*ranged, *slider);
            row->control = std::move(slider);
        }
        row->control->setTitle(name);
        row->control->setHelpText(tip);
        row->control->setComponentID(row->parameterId);
        rows.push_back(std::move(row));
    };

    const auto& tree = processor.getParameterTree();
    bool looseHeading = false;
    for (const auto* node : tree)
    {
        if (const auto* group = node->getGroup())
        {
            addHeading(group->getName());
            for (auto* p : group->getParameters(true))
                addParameter(*p);
        }
        else if (auto* p = node->getParameter())
        {
            if (!looseHeading)
                addHeading("Output and timing");
            looseHeading = true;
            addParameter(*p);
        }
    }

    content = std::make_unique<Content>(rows);
    for (auto& row : rows)
    {
        content->addAndMakeVisible(row->name);
        if (row->control != nullptr)
            content->addAndMakeVisible(*row->control);
    }
    viewport = std::make_unique<ScrollingView>();
    viewport->setViewedComponent(content.get(), false);
    addAndMakeVisible(*viewport);
}

ParameterPanel::~ParameterPanel()
{
    // Attachments go before their controls (Row's member order), rows after the viewport.
    viewport = nullptr;
    content = nullptr;
    rows.clear();
}

juce::Component* ParameterPanel::controlFor(const juce::String& parameterId) const
{
    for (const auto& row : rows)
        if (!row->heading && row->parameterId == parameterId)
            return row->control.get();
    return nullptr;
}

void ParameterPanel::paint(juce::Graphics& g)
{
    g.fillAll(juce::Colour(0xff1a2026));
}

void ParameterPanel::resized()
{
    viewport->setBounds(getLocalBounds());
    // The vertical scroll bar is always there (the list is far taller than any editor).
    content->setSize(std::max(0, getWidth() - viewport->getScrollBarThickness()),
                     content->heightFor());
}

} // namespace kerf
