#include "StageList.h"

#include "Chain.h"
#include "NotePitch.h"
#include "ParameterTooltips.h"
#include "Parameters.h"
#include "SectionHandles.h"

#include <cmath>

namespace kerf
{

namespace
{
// Our own look: slate rows, a warm sand for text, a pale teal edge on the selected row.
const juce::Colour kRowGround(0xff1b2229);
const juce::Colour kRowGroundOff(0xff171c22);
const juce::Colour kRowSelected(0xff263440);
const juce::Colour kEdge(0xff8fd1c4);
const juce::Colour kSand(0xffd8cbb0);

// Section type choices (Parameters.cpp): 0 peaking, 1 low shelf, 2 high shelf, 3 high-pass,
// 4 low-pass, 5 notch, 6 band-pass, 7 all-pass, 8 tilt.
bool typeHasGain(int t)
{
    return t == 0 || t == 1 || t == 2 || t == 8;
}
bool typeIsShelf(int t)
{
    return t == 1 || t == 2;
}
bool typeIsPass(int t)
{
    return t == 3 || t == 4;
}
bool typeHasQ(int t, int align)
{
    return t == 0 || t == 5 || t == 6 || t == 7 ||
           (typeIsPass(t) && align == static_cast<int>(SlotAlignment::resonant));
}
bool typeHasOrder(int t)
{
    return typeIsPass(t) || t == 7;
}

/// Gives a control's inner parts (a slider's value box, a combo box's label) the control's
/// title and tooltip, so that every part a user can reach is described.
void describeParts(juce::Component& control, const juce::String& title, const juce::String& tip)
{
    for (auto* child : control.getChildren())
    {
        if (child->getTitle().isEmpty())
            child->setTitle(title);
        if (auto* t = dynamic_cast<juce::SettableTooltipClient*>(child))
            if (t->getTooltip().isEmpty())
                t->setTooltip(tip);
        describeParts(*child, title, tip);
    }
}
} // namespace

namespace
{
/// A bar slider whose arrow-key steps are gestures, as drags and typed values already are in
/// JUCE (so that each step is one undo step and one automation gesture).
class StepSlider : public juce::Slider
{
public:
    StepSlider() : juce::Slider(juce::Slider::LinearBar, juce::Slider::TextBoxLeft) {}
    bool keyPressed(const juce::KeyPress& key) override
    {
        const bool step = !key.getModifiers().isAnyModifierKeyDown() &&
                          (key == juce::KeyPress::upKey || key == juce::KeyPress::downKey ||
                           key == juce::KeyPress::leftKey || key == juce::KeyPress::rightKey);
        if (!step)
            return juce::Slider::keyPressed(key);
        ScopedDragNotification gesture(*this);
        return juce::Slider::keyPressed(key);
    }
};
} // namespace

/// A viewport (it takes keyboard focus: arrows and page keys scroll) whose scroll bars carry
/// a title and a tooltip like every other control.
class StageList::ScrollingView : public juce::Viewport, public juce::SettableTooltipClient
{
public:
    ScrollingView()
    {
        // The base constructor made its scroll bars before this class existed: make ours.
        recreateScrollbars();
        setScrollBarsShown(true, false);
        setTitle("Stage list");
        setTooltip("A row per stage; the mouse wheel, the scroll bar or the arrow keys scroll it");
    }

    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override
    {
        return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
    }

private:
    struct Bar : juce::ScrollBar, juce::SettableTooltipClient
    {
        explicit Bar(bool upright) : juce::ScrollBar(upright)
        {
            setTitle(upright ? "Stage list, vertical scroll" : "Stage list, horizontal scroll");
            setTooltip("Scrolls the stage list (the mouse wheel scrolls it too)");
        }
    };
    juce::ScrollBar* createScrollBarComponent(bool isVertical) override
    {
        return new Bar(isVertical);
    }
};

// ---- Rows -----------------------------------------------------------------------------------

/// One row: its controls, each with a caption, laid out on one or more lines.
class StageList::Row : public juce::Component, public juce::SettableTooltipClient
{
public:
    Row(StageList& o, juce::AudioProcessorValueTreeState& s, Kind k, int sl)
        : owner(o), state(s), kind(k), slot(sl)
    {
        name.setColour(juce::Label::textColourId, kSand);
        name.setFont(juce::Font(14.0f, juce::Font::bold));
        name.setInterceptsMouseClicks(false, false);
        addAndMakeVisible(name);
        summary.setColour(juce::Label::textColourId, kSand.withAlpha(0.6f));
        summary.setInterceptsMouseClicks(false, false);
        addChildComponent(summary);
    }
    ~Row() override = default;

    /// Height for the current state.
    virtual int preferredHeight() const = 0;
    /// Shows the controls the current state uses and places them.
    virtual void layout() = 0;
    /// A value that changes when the row's shape must change (on, type, ...).
    virtual int shapeKey() const = 0;
    /// Called by the list's timer.
    virtual void update() {}
    virtual bool expanded() const { return true; }

    void resized() override { layout(); }
    void paint(juce::Graphics& g) override
    {
        const bool isSelected = owner.selected >= 0 &&
                                owner.rows[static_cast<std::size_t>(owner.selected)].get() == this;
        g.setColour(isSelected ? kRowSelected : (expanded() ? kRowGround : kRowGroundOff));
        g.fillRect(getLocalBounds().withTrimmedBottom(2));
        if (isSelected)
        {
            g.setColour(kEdge);
            g.fillRect(0, 0, 3, getHeight() - 2);
        }
    }
    void mouseDown(const juce::MouseEvent&) override { owner.rowClicked(*this); }
    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override
    {
        return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
    }
    void focusOfChildComponentChanged(FocusChangeType) override
    {
        if (hasKeyboardFocus(true))
            owner.rowClicked(*this);
    }

    juce::Component* find(const juce::String& id) const
    {
        for (auto* c : controls)
            if (c->getComponentID() == id)
                return c;
        return nullptr;
    }

    StageList& owner;
    juce::AudioProcessorValueTreeState& state;
    const Kind kind;
    const int slot;
    int lastShape = -1;

protected:
    static constexpr int kLineHeight = StageList::kLineHeight;

    float value(const juce::String& id) const
    {
        const auto* raw = state.getRawParameterValue(id);
        return raw != nullptr ? raw->load() : 0.0f;
    }
    int choice(const juce::String& id) const { return juce::roundToInt(value(id)); }

    /// A control with its caption; both hidden until placed.
    struct Field
    {
        juce::Component* control = nullptr;
        std::unique_ptr<juce::Label> caption;
        int width = 100;
    };

    juce::ToggleButton& addToggle(const juce::String& id, const juce::String& title)
    {
        auto b = std::make_unique<juce::ToggleButton>();
        b->setButtonText({});
        auto& ref = *b;
        if (auto* p = state.getParameter(id))
            buttonAttachments.push_back(std::make_unique<juce::ButtonParameterAttachment>(*p, ref));
        own(std::move(b), id, title, parameterTooltip(id));
        return ref;
    }

    juce::ComboBox& addChoice(const juce::String& id, const juce::String& title)
    {
        auto box = std::make_unique<juce::ComboBox>();
        auto& ref = *box;
        if (auto* p = dynamic_cast<juce::AudioParameterChoice*>(state.getParameter(id)))
        {
            box->addItemList(p->choices, 1);
            boxAttachments.push_back(std::make_unique<juce::ComboBoxParameterAttachment>(*p, ref));
        }
        own(std::move(box), id, title, parameterTooltip(id));
        return ref;
    }

    juce::Slider& addSlider(const juce::String& id, const juce::String& title)
    {
        auto s = std::make_unique<StepSlider>();
        auto& ref = *s;
        s->setScrollWheelEnabled(false); // the wheel scrolls the list
        s->setTextBoxIsEditable(true);
        s->setColour(juce::Slider::trackColourId, kEdge.withAlpha(0.35f));
        s->setColour(juce::Slider::textBoxTextColourId, kSand);
        if (auto* p = state.getParameter(id))
        {
            s->setDoubleClickReturnValue(true, p->convertFrom0to1(p->getDefaultValue()));
            sliderAttachments.push_back(std::make_unique<juce::SliderParameterAttachment>(*p, ref));
        }
        own(std::move(s), id, title, parameterTooltip(id));
        return ref;
    }

    /// Takes a control: component ID, accessibility title, tooltip, keyboard focus.
    template <typename C>
    void own(std::unique_ptr<C> c, const juce::String& id, const juce::String& title,
             const juce::String& tip)
    {
        c->setComponentID(id);
        c->setTitle(title);
        c->setTooltip(tip);
        c->setHelpText(tip);
        c->setWantsKeyboardFocus(true);
        describeParts(*c, title, tip);
        addChildComponent(*c);
        controls.push_back(c.get());
        owned.push_back(std::move(c));
    }

    /// Adds a caption for a control (the control keeps its own title).
    Field field(juce::Component& control, const juce::String& caption, int width)
    {
        Field f;
        f.control = &control;
        f.width = width;
        if (caption.isNotEmpty())
        {
            f.caption = std::make_unique<juce::Label>();
            f.caption->setText(caption, juce::dontSendNotification);
            f.caption->setColour(juce::Label::textColourId, kSand.withAlpha(0.75f));
            f.caption->setFont(juce::Font(12.5f));
            f.caption->setJustificationType(juce::Justification::centredRight);
            f.caption->setInterceptsMouseClicks(false, false);
            addChildComponent(*f.caption);
        }
        return f;
    }

    /// Places fields left to right on a line, skipping the hidden ones.
    /// When the line is too narrow, the controls (not the captions) share what is left, so
    /// everything stays inside the row.
    static void placeLine(juce::Rectangle<int> line, std::initializer_list<Field*> fields)
    {
        constexpr int gap = 6;
        auto captionWidth = [](const Field& f)
        { return f.caption->getFont().getStringWidth(f.caption->getText()) + 8; };
        int fixed = 0, wanted = 0;
        for (auto* f : fields)
            if (f->control != nullptr && f->control->isVisible())
            {
                fixed += gap + (f->caption ? captionWidth(*f) : 0);
                wanted += f->width;
            }
        const double scale =
            wanted > 0 && fixed + wanted > line.getWidth()
                ? juce::jmax(0.0, (line.getWidth() - fixed) / static_cast<double>(wanted))
                : 1.0;
        for (auto* f : fields)
        {
            if (f->control == nullptr || !f->control->isVisible())
            {
                if (f->caption)
                    f->caption->setVisible(false);
                continue;
            }
            if (f->caption)
            {
                f->caption->setVisible(true);
                f->caption->setBounds(line.removeFromLeft(captionWidth(*f)));
            }
            const int w = static_cast<int>(std::floor(f->width * scale));
            f->control->setBounds(line.removeFromLeft(w).reduced(1, 2));
            line.removeFromLeft(gap);
        }
    }

    static juce::Rectangle<int> lineOf(juce::Rectangle<int> area, int index)
    {
        return area.withHeight(kLineHeight).translated(0, index * kLineHeight);
    }
    juce::Rectangle<int> inner() const { return getLocalBounds().reduced(6, 2).withTrimmedLeft(2); }

    juce::Label name, summary;
    std::vector<juce::Component*> controls;
    std::vector<std::unique_ptr<juce::Component>> owned;
    std::vector<std::unique_ptr<juce::ButtonParameterAttachment>> buttonAttachments;
    std::vector<std::unique_ptr<juce::ComboBoxParameterAttachment>> boxAttachments;
    std::vector<std::unique_ptr<juce::SliderParameterAttachment>> sliderAttachments;

    friend class StageList;
};

namespace
{

class SectionRow final : public StageList::Row
{
public:
    SectionRow(StageList& o, juce::AudioProcessorValueTreeState& s, int sl)
        : Row(o, s, StageList::Kind::section, sl)
    {
        const juce::String n = "Section " + juce::String(sl + 1);
        name.setText(juce::String(sl + 1), juce::dontSendNotification);
        setTitle(n);
        setTooltip(n + ": click to select it (its handle on the response display too)");
        on = field(addToggle(ids::slotOn(sl), n + " on"), {}, 26);
        type = field(addChoice(ids::slotType(sl), n + " type"), {}, 112);
        chan = field(addChoice(ids::slotChan(sl), n + " channels"), "ch", 74);
        design = field(addChoice(ids::slotDesign(sl), n + " design"), "design", 92);
        align = field(addChoice(ids::slotAlign(sl), n + " alignment"), "align", 128);
        freq = field(addSlider(ids::slotFreq(sl), n + " frequency"), "freq", 96);
        gain = field(addSlider(ids::slotGain(sl), n + " gain"), "gain", 86);
        q = field(addSlider(ids::slotQ(sl), n + " Q"), "Q", 70);
        slope = field(addSlider(ids::slotSlope(sl), n + " shelf slope"), "slope", 70);
        order = field(addSlider(ids::slotOrder(sl), n + " order"), "order", 116);
    }

    bool expanded() const override { return value(ids::slotOn(slot)) > 0.5f; }
    int shapeKey() const override
    {
        return (expanded() ? 1 : 0) + 2 * choice(ids::slotType(slot)) +
               32 * choice(ids::slotAlign(slot));
    }
    int preferredHeight() const override
    {
        return expanded() ? 2 * kLineHeight + 8 : kLineHeight + 6;
    }

    void layout() override
    {
        const int t = choice(ids::slotType(slot));
        const bool open = expanded();
        on.control->setVisible(true);
        type.control->setVisible(true);
        for (auto* f : {&chan, &design, &freq})
            f->control->setVisible(open);
        gain.control->setVisible(open && typeHasGain(t));
        q.control->setVisible(open && typeHasQ(t, choice(ids::slotAlign(slot))));
        slope.control->setVisible(open && typeIsShelf(t));
        order.control->setVisible(open && typeHasOrder(t));
        align.control->setVisible(open && typeIsPass(t));

        auto area = inner();
        auto line = lineOf(area, 0);
        name.setBounds(line.removeFromLeft(26));
        summary.setVisible(!open);
        placeLine(line, {&on, &type});
        if (!open)
        {
            update();
            summary.setBounds(line.withTrimmedLeft(26 + 112 + 12));
            placeLine({}, {&chan, &design, &align, &freq, &gain, &q, &slope, &order});
            return;
        }
        placeLine(line.withTrimmedLeft(26 + 112 + 12), {&chan, &design});
        placeLine(lineOf(area, 1).withTrimmedLeft(26), {&freq, &gain, &q, &slope, &order, &align});
    }

    void update() override
    {
        if (expanded())
            return;
        auto* p = state.getParameter(ids::slotFreq(slot));
        const auto text = "off, " + (p != nullptr ? p->getCurrentValueAsText() : juce::String());
        if (summary.getText() != text)
            summary.setText(text, juce::dontSendNotification);
    }

private:
    Field on, type, chan, design, align, freq, gain, q, slope, order;
};

class CombRow final : public StageList::Row
{
public:
    CombRow(StageList& o, juce::AudioProcessorValueTreeState& s, int sl)
        : Row(o, s, StageList::Kind::comb, sl), prefix("comb" + juce::String(sl + 1))
    {
        const juce::String n = "Comb " + juce::String(sl + 1);
        name.setText("C" + juce::String(sl + 1), juce::dontSendNotification);
        setTitle(n);
        setTooltip(n + ": click to select it");
        on = field(addToggle(ids::comb(sl, "on"), n + " on"), {}, 26);
        mode = field(addChoice(ids::comb(sl, "mode"), n + " mode"), {}, 112);
        tuning = field(addChoice(ids::comb(sl, "tuning"), n + " tuning"), "by", 74);
        gain = field(addSlider(ids::comb(sl, "gain"), n + " gain"), "gain", 80);
        damp = field(addSlider(ids::comb(sl, "damp"), n + " damping"), "damp", 90);
        mix = field(addSlider(ids::comb(sl, "mix"), n + " dry/wet"), "dry/wet", 70);
        delay = field(addSlider(ids::comb(sl, "delay"), n + " delay"), "delay", 100);
        pitch = field(addSlider(ids::comb(sl, "pitch"), n + " pitch"), "pitch", 96);
        change = field(addChoice(ids::comb(sl, "change"), n + " delay change"), "change", 100);

        // Note controls: not parameters themselves; each change sets the pitch parameter
        // as one gesture.
        auto text = std::make_unique<juce::TextEditor>();
        text->setSelectAllWhenFocused(true);
        text->setJustification(juce::Justification::centred);
        text->onReturnKey = [this] { commitNoteText(); };
        text->onEscapeKey = [this] { update(); };
        text->onFocusLost = [this] { update(); };
        own(std::move(text), prefix + "_noteText", n + " pitch as a note",
            "The pitch as note and cents (A4 = 440 Hz); type a note such as D#3 or A4 -12 "
            "and press Enter");
        noteText = field(*dynamic_cast<juce::TextEditor*>(controls.back()), "note", 84);

        auto names = std::make_unique<juce::ComboBox>();
        for (int pc = 0; pc < 12; ++pc)
            names->addItem(notes::noteName(60 + pc).dropLastCharacters(1), pc + 1);
        names->onChange = [this] { setNoteFromBoxes(); };
        own(std::move(names), prefix + "_noteName", n + " note name",
            "Tunes the comb to this note (in the octave beside it)");
        noteName = field(*dynamic_cast<juce::ComboBox*>(controls.back()), "tune to", 58);

        auto octaves = std::make_unique<juce::ComboBox>();
        for (int oct = 0; oct <= 8; ++oct)
            octaves->addItem(juce::String(oct), oct + 1);
        octaves->onChange = [this] { setNoteFromBoxes(); };
        own(std::move(octaves), prefix + "_noteOctave", n + " octave",
            "The octave of the note (C4 is middle C)");
        noteOctave = field(*dynamic_cast<juce::ComboBox*>(controls.back()), {}, 50);

        auto cents = std::make_unique<StepSlider>();
        cents->setRange(-50.0, 50.0, 1.0);
        cents->setScrollWheelEnabled(false);
        cents->setTextValueSuffix(" ct");
        cents->setDoubleClickReturnValue(true, 0.0);
        cents->setColour(juce::Slider::trackColourId, kEdge.withAlpha(0.35f));
        cents->setColour(juce::Slider::textBoxTextColourId, kSand);
        cents->onDragStart = [this]
        {
            if (auto* p = pitchParameter())
                p->beginChangeGesture();
            centsDragging = true;
        };
        cents->onDragEnd = [this]
        {
            centsDragging = false;
            if (auto* p = pitchParameter())
                p->endChangeGesture();
        };
        cents->onValueChange = [this] { setNoteFromBoxes(); };
        own(std::move(cents), prefix + "_cents", n + " fine tuning",
            "Fine tuning in cents (hundredths of a semitone) around the note");
        centsSlider = dynamic_cast<juce::Slider*>(controls.back());
        centsField = field(*centsSlider, "fine", 84);
        update();
    }

    bool expanded() const override { return value(ids::comb(slot, "on")) > 0.5f; }
    bool byPitch() const { return choice(ids::comb(slot, "tuning")) == 1; }
    int shapeKey() const override { return (expanded() ? 1 : 0) + (byPitch() ? 2 : 0); }
    int preferredHeight() const override
    {
        return expanded() ? (byPitch() ? 3 : 2) * kLineHeight + 8 : kLineHeight + 6;
    }

    void layout() override
    {
        const bool open = expanded();
        const bool pitchTuned = byPitch();
        on.control->setVisible(true);
        mode.control->setVisible(true);
        for (auto* f : {&tuning, &gain, &damp, &mix, &change})
            f->control->setVisible(open);
        delay.control->setVisible(open && !pitchTuned);
        pitch.control->setVisible(open && pitchTuned);
        for (auto* f : {&noteText, &noteName, &noteOctave, &centsField})
            f->control->setVisible(open && pitchTuned);

        auto area = inner();
        auto line = lineOf(area, 0);
        name.setBounds(line.removeFromLeft(26));
        placeLine(line, {&on, &mode});
        summary.setVisible(!open);
        const auto rest = line.withTrimmedLeft(26 + 112 + 12);
        if (!open)
        {
            summary.setText("off", juce::dontSendNotification);
            summary.setBounds(rest);
            return;
        }
        placeLine(rest, {&gain, &damp, &mix});
        placeLine(lineOf(area, 1).withTrimmedLeft(26),
                  {&tuning, &delay, &pitch, &noteText, &change});
        placeLine(lineOf(area, 2).withTrimmedLeft(26), {&noteName, &noteOctave, &centsField});
    }

    void update() override
    {
        // The note readouts follow the pitch parameter (not while the user types or drags).
        const double hz = value(ids::comb(slot, "pitch"));
        auto* text = dynamic_cast<juce::TextEditor*>(noteText.control);
        if (text != nullptr && !text->hasKeyboardFocus(true))
            text->setText(notes::describeFrequency(hz), juce::dontSendNotification);
        if (centsDragging || !(hz > 0.0))
            return;
        const auto nearest = notes::nearestNote(hz);
        const int pc = ((nearest.note % 12) + 12) % 12;
        const int octave = (nearest.note - pc) / 12 - 1;
        auto* names = dynamic_cast<juce::ComboBox*>(noteName.control);
        auto* octaves = dynamic_cast<juce::ComboBox*>(noteOctave.control);
        names->setSelectedId(pc + 1, juce::dontSendNotification);
        octaves->setSelectedId(octave + 1, juce::dontSendNotification);
        centsSlider->setValue(std::round(nearest.cents), juce::dontSendNotification);
    }

private:
    juce::RangedAudioParameter* pitchParameter() const
    {
        return state.getParameter(ids::comb(slot, "pitch"));
    }

    /// Sets the pitch parameter to a note number (fractional: cents); one gesture unless a
    /// drag holds one open.
    void setPitchToNote(double note)
    {
        auto* p = pitchParameter();
        if (p == nullptr)
            return;
        const auto range = p->getNormalisableRange();
        const double hz =
            juce::jlimit(static_cast<double>(range.start), static_cast<double>(range.end),
                         notes::frequencyOfNote(note));
        const float normalised = p->convertTo0to1(static_cast<float>(hz));
        if (centsDragging)
        {
            p->setValueNotifyingHost(normalised);
            return;
        }
        p->beginChangeGesture();
        p->setValueNotifyingHost(normalised);
        p->endChangeGesture();
    }

    void setNoteFromBoxes()
    {
        auto* names = dynamic_cast<juce::ComboBox*>(noteName.control);
        auto* octaves = dynamic_cast<juce::ComboBox*>(noteOctave.control);
        if (names->getSelectedId() == 0 || octaves->getSelectedId() == 0)
            return;
        const int note = (octaves->getSelectedId() - 1 + 1) * 12 + (names->getSelectedId() - 1);
        setPitchToNote(note + centsSlider->getValue() / 100.0);
        update();
    }

    void commitNoteText()
    {
        auto* text = dynamic_cast<juce::TextEditor*>(noteText.control);
        if (const auto note = notes::parseNote(text->getText()))
            setPitchToNote(*note);
        text->giveAwayKeyboardFocus();
        update();
    }

    juce::String prefix;
    Field on, mode, tuning, gain, damp, mix, delay, pitch, change, noteText, noteName, noteOctave,
        centsField;
    juce::Slider* centsSlider = nullptr;
    bool centsDragging = false;
};

class EchoRow final : public StageList::Row
{
public:
    EchoRow(StageList& o, juce::AudioProcessorValueTreeState& s)
        : Row(o, s, StageList::Kind::echo, 0)
    {
        name.setText("E", juce::dontSendNotification);
        setTitle("Echo cancel");
        setTooltip("Echo cancellation: click to select it");
        on = field(addToggle(ids::echoOn, "Echo cancel on"), {}, 26);
        method = field(addChoice(ids::echoMethod, "Echo cancel method"), {}, 112);
        terms = field(addSlider(ids::echoTerms, "Echo cancel series terms"), "terms", 70);
        for (int k = 0; k < dsp::kMaxEchoReflections; ++k)
        {
            const juce::String r = "Reflection " + juce::String(k + 1);
            reflections.push_back(field(addSlider(ids::echoDelay(k), "Echo " + r + " delay"),
                                        "r" + juce::String(k + 1) + " delay", 96));
            reflections.push_back(
                field(addSlider(ids::echoGain(k), "Echo " + r + " gain"), "gain", 78));
        }
    }

    bool expanded() const override { return value(ids::echoOn) > 0.5f; }
    int shapeKey() const override { return (expanded() ? 1 : 0) + 2 * choice(ids::echoMethod); }
    int preferredHeight() const override
    {
        return expanded() ? (1 + (dsp::kMaxEchoReflections + 1) / 2) * kLineHeight + 8
                          : kLineHeight + 6;
    }

    void layout() override
    {
        const bool open = expanded();
        on.control->setVisible(true);
        method.control->setVisible(true);
        terms.control->setVisible(open && choice(ids::echoMethod) == 1);
        for (auto& f : reflections)
            f.control->setVisible(open);
        auto area = inner();
        auto line = lineOf(area, 0);
        name.setBounds(line.removeFromLeft(26));
        placeLine(line, {&on, &method, &terms});
        summary.setVisible(!open);
        if (!open)
        {
            summary.setText("off", juce::dontSendNotification);
            summary.setBounds(line.withTrimmedLeft(26 + 112 + 12));
            for (auto& f : reflections)
                placeLine({}, {&f});
            return;
        }
        for (std::size_t k = 0; k + 1 < reflections.size(); k += 2)
        {
            const int lineIndex = 1 + static_cast<int>(k / 4);
            auto l = lineOf(area, lineIndex).withTrimmedLeft(26);
            l = (k / 2) % 2 == 1 ? l.withTrimmedLeft(l.getWidth() / 2)
                                 : l.withWidth(l.getWidth() / 2 - 6);
            placeLine(l, {&reflections[k], &reflections[k + 1]});
        }
    }

private:
    Field on, method, terms;
    std::vector<Field> reflections;
};

class OutputRow final : public StageList::Row
{
public:
    OutputRow(StageList& o, juce::AudioProcessorValueTreeState& s)
        : Row(o, s, StageList::Kind::output, 0)
    {
        name.setText("Out", juce::dontSendNotification);
        setTitle("Output");
        setTooltip("The output: gain, peak protection, glide time and bypass");
        gain = field(addSlider(ids::outputGain, "Output gain"), "gain", 84);
        protect = field(addToggle(ids::protectOn, "Output protection"), "protect", 26);
        ceiling = field(addSlider(ids::protectCeiling, "Protection ceiling"), "ceiling", 84);
        glide = field(addSlider(ids::glideMs, "Glide time"), "glide", 84);
        bypass = field(addToggle(ids::bypass, "Bypass"), "bypass", 26);
    }
    int shapeKey() const override { return 1; }
    int preferredHeight() const override { return kLineHeight + 6; }
    void layout() override
    {
        for (auto* f : {&gain, &protect, &ceiling, &glide, &bypass})
            f->control->setVisible(true);
        auto line = lineOf(inner(), 0);
        name.setBounds(line.removeFromLeft(34));
        placeLine(line, {&gain, &protect, &ceiling, &glide, &bypass});
    }

private:
    Field gain, protect, ceiling, glide, bypass;
};

} // namespace

// ---- The list ---------------------------------------------------------------------------------

StageList::StageList(juce::AudioProcessorValueTreeState& state)
    : params(state), viewHolder(std::make_unique<ScrollingView>()), view(*viewHolder)
{
    setComponentID("stageList");
    setTitle("Stage list");
    rows.push_back(std::make_unique<EchoRow>(*this, state));
    for (int i = 0; i < kNumSectionSlots; ++i)
        rows.push_back(std::make_unique<SectionRow>(*this, state, i));
    for (int c = 0; c < kNumCombSlots; ++c)
        rows.push_back(std::make_unique<CombRow>(*this, state, c));
    rows.push_back(std::make_unique<OutputRow>(*this, state));
    for (auto& r : rows)
    {
        r->lastShape = r->shapeKey();
        content.addAndMakeVisible(*r);
    }
    view.setViewedComponent(&content, false);
    view.setScrollBarsShown(true, false);
    view.setSingleStepSizes(20, kLineHeight);
    addAndMakeVisible(view);
    startTimerHz(10);
}

StageList::~StageList()
{
    stopTimer();
}

void StageList::linkHandles(SectionHandles* h)
{
    handles = h;
    lastHandleSelection = h != nullptr ? h->selectedSlot() : -1;
}

StageList::Kind StageList::rowKind(int row) const
{
    return rows.at(static_cast<std::size_t>(row))->kind;
}

int StageList::rowSlot(int row) const
{
    return rows.at(static_cast<std::size_t>(row))->slot;
}

int StageList::rowOf(Kind kind, int slot) const
{
    for (std::size_t i = 0; i < rows.size(); ++i)
        if (rows[i]->kind == kind && rows[i]->slot == slot)
            return static_cast<int>(i);
    return -1;
}

bool StageList::rowExpanded(int row) const
{
    return rows.at(static_cast<std::size_t>(row))->expanded();
}

void StageList::selectRow(int row)
{
    if (!juce::isPositiveAndBelow(row, numRows()))
        row = -1;
    if (row != selected)
    {
        selected = row;
        for (auto& r : rows)
            r->repaint();
    }
    if (row < 0)
        return;
    auto& r = *rows[static_cast<std::size_t>(row)];
    // Scroll it into view.
    const auto shown = view.getViewArea();
    if (r.getY() < shown.getY())
        view.setViewPosition(0, r.getY());
    else if (r.getBottom() > shown.getBottom())
        view.setViewPosition(0, r.getBottom() - shown.getHeight());
    if (handles != nullptr && r.kind == Kind::section && handles->selectedSlot() != r.slot)
    {
        handles->select(r.slot); // selects only a section that is on
        lastHandleSelection = handles->selectedSlot();
    }
}

void StageList::rowClicked(Row& row)
{
    for (std::size_t i = 0; i < rows.size(); ++i)
        if (rows[i].get() == &row)
            selectRow(static_cast<int>(i));
}

juce::Component* StageList::controlFor(const juce::String& componentId) const
{
    for (auto& r : rows)
        if (auto* c = r->find(componentId))
            return c;
    return nullptr;
}

void StageList::refresh()
{
    bool reshaped = false;
    for (auto& r : rows)
    {
        const int shape = r->shapeKey();
        if (shape != r->lastShape)
        {
            r->lastShape = shape;
            reshaped = true;
        }
        r->update();
    }
    if (reshaped)
        layoutRows();
    if (handles != nullptr)
    {
        const int now = handles->selectedSlot();
        if (now != lastHandleSelection)
        {
            lastHandleSelection = now;
            if (now >= 0)
                selectRow(rowOf(Kind::section, now));
        }
    }
}

void StageList::layoutRows()
{
    const int width = view.getMaximumVisibleWidth();
    int y = 0;
    for (auto& r : rows)
    {
        const int h = r->preferredHeight();
        r->setBounds(0, y, width, h);
        r->layout(); // also when only the shape changed, not the size
        y += h;
    }
    content.setSize(width, y);
}

void StageList::resized()
{
    view.setBounds(getLocalBounds());
    layoutRows();
    // The scroll bar may have appeared or gone with the new content height.
    if (view.getMaximumVisibleWidth() != content.getWidth())
        layoutRows();
}

std::unique_ptr<juce::AccessibilityHandler> StageList::createAccessibilityHandler()
{
    return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
}

void StageList::paint(juce::Graphics& g)
{
    g.fillAll(juce::Colour(0xff14191e));
}

} // namespace kerf
