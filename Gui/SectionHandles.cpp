#include "SectionHandles.h"

#include "Limits.h"
#include "Parameters.h"
#include "ResponseView.h"

#include <algorithm>
#include <cmath>

namespace kerf
{

namespace
{
using namespace dsp::limits;

// Our own look: pale teal rings on the slate ground; a lozenge for slots with a gain, an
// upright bar on the 0 dB line for slots that only move along frequency.
const juce::Colour kRing(0xff8fd1c4);
const juce::Colour kLit(0xffe9e2cf);
const juce::Colour kGround(0xff1d232a);

juce::String hzText(double hz)
{
    return hz >= 1000.0 ? juce::String(hz / 1000.0, 2) + " kHz" : juce::String(hz, 1) + " Hz";
}
} // namespace

SectionHandles::SectionHandles(ResponseView& v) : view(v)
{
    setInterceptsMouseClicks(true, true); // the inline value field is a child
    setComponentID("sectionHandles");
    setWantsKeyboardFocus(true);
    setTitle("Section handles");
    setTooltip("Drag a handle for frequency and gain; wheel or Alt-drag for Q; double-click "
               "resets; Tab selects one from the keyboard");
    setHelpText("Tab selects a section; arrows step frequency and gain, plus and minus Q "
                "(Shift: finer); Enter types a frequency, G a gain, Q a Q; Delete resets.");
    valueField.setVisible(false);
    valueField.setJustification(juce::Justification::centred);
    valueField.setSelectAllWhenFocused(true);
    addChildComponent(valueField);
}

SectionHandles::~SectionHandles()
{
    endGesture(); // an editor closed during a drag
}

void SectionHandles::attach(juce::AudioProcessorValueTreeState& state)
{
    params = &state;
    repaint();
}

bool SectionHandles::typeHasGain(int t) noexcept
{
    // Type choices (Parameters.cpp): 0 peaking, 1 low shelf, 2 high shelf, 8 tilt carry a gain.
    return t == 0 || t == 1 || t == 2 || t == 8;
}

juce::RangedAudioParameter* SectionHandles::param(const juce::String& id) const
{
    return params != nullptr ? params->getParameter(id) : nullptr;
}

std::optional<SectionHandles::Handle> SectionHandles::handleFor(int slot) const
{
    if (params == nullptr || slot < 0 || slot >= kNumSectionSlots)
        return std::nullopt;
    auto value = [this](const juce::String& id)
    {
        const auto* raw = params->getRawParameterValue(id);
        return raw != nullptr ? static_cast<double>(raw->load()) : 0.0;
    };
    if (value(ids::slotOn(slot)) < 0.5)
        return std::nullopt;
    Handle h;
    h.slot = slot;
    h.type = juce::roundToInt(value(ids::slotType(slot)));
    h.hasGain = typeHasGain(h.type);
    h.freqHz = value(ids::slotFreq(slot));
    h.gainDb = value(ids::slotGain(slot));
    h.q = value(ids::slotQ(slot));
    const auto plot = view.plotArea().toFloat();
    h.position = {
        std::clamp(view.xForFrequency(h.freqHz), plot.getX(), plot.getRight()),
        std::clamp(view.yForDb(h.hasGain ? h.gainDb : 0.0), plot.getY(), plot.getBottom())};
    return h;
}

std::vector<SectionHandles::Handle> SectionHandles::handles() const
{
    std::vector<Handle> out;
    for (int s = 0; s < kNumSectionSlots; ++s)
        if (auto h = handleFor(s))
            out.push_back(*h);
    return out;
}

std::optional<int> SectionHandles::slotAt(juce::Point<float> p) const
{
    // The nearest handle within the grab radius (the last drawn wins a tie: it lies on top).
    std::optional<int> best;
    float bestDistance = kGrabRadius;
    for (const auto& h : handles())
    {
        const float d = h.position.getDistanceFrom(p);
        if (d <= bestDistance)
        {
            bestDistance = d;
            best = h.slot;
        }
    }
    return best;
}

juce::String SectionHandles::readout(int slot) const
{
    const auto h = handleFor(slot);
    if (!h)
        return {};
    juce::String text = "Section " + juce::String(slot + 1) + "  " +
                        param(ids::slotType(slot))->getCurrentValueAsText() + "  " +
                        hzText(h->freqHz);
    if (h->hasGain)
        text << "  " << (h->gainDb >= 0.0 ? "+" : "") << juce::String(h->gainDb, 1) << " dB";
    text << "  Q " << juce::String(h->q, 2);
    return text;
}

bool SectionHandles::hitTest(int x, int y)
{
    return view.plotArea().contains(x, y);
}

void SectionHandles::paint(juce::Graphics& g)
{
    if (params == nullptr || view.plotArea().isEmpty())
        return;
    juce::Graphics::ScopedSaveState save(g);
    g.reduceClipRegion(view.plotArea().expanded(1));
    const int chosen = selectedSlot();
    const bool focused = hasKeyboardFocus(true);
    // The selection's readout shows while the keyboard is here.
    const int lit = dragSlot >= 0 ? dragSlot : hovered >= 0 ? hovered : focused ? chosen : -1;
    g.setFont(10.0f);
    for (const auto& h : handles())
    {
        const bool on = h.slot == lit;
        const auto c = h.position;
        if (h.slot == chosen)
        {
            // The keyboard's selection: a ring around the handle, solid while focused.
            g.setColour(kLit.withAlpha(focused ? 1.0f : 0.55f));
            g.drawEllipse(c.x - 12.0f, c.y - 12.0f, 24.0f, 24.0f, 1.6f);
        }
        juce::Path shape;
        if (h.hasGain)
        {
            const float r = on ? 7.5f : 6.0f;
            shape.addQuadrilateral(c.x, c.y - r, c.x + r, c.y, c.x, c.y + r, c.x - r, c.y);
        }
        else
        {
            const float w = on ? 5.0f : 4.0f, half = on ? 9.0f : 7.5f;
            shape.addRoundedRectangle(c.x - 0.5f * w, c.y - half, w, 2.0f * half, 0.5f * w);
        }
        g.setColour(on ? kLit : kGround.withAlpha(0.75f));
        g.fillPath(shape);
        g.setColour(on ? kLit : kRing);
        g.strokePath(shape, juce::PathStrokeType(on ? 2.0f : 1.4f));
        g.setColour(kRing.withAlpha(0.9f));
        g.drawText(juce::String(h.slot + 1), juce::roundToInt(c.x) - 10, juce::roundToInt(c.y) - 22,
                   20, 11, juce::Justification::centred);
    }
    if (lit >= 0)
        if (const auto h = handleFor(lit))
        {
            const auto text = readout(lit);
            g.setFont(11.0f);
            const int w = g.getCurrentFont().getStringWidth(text) + 10;
            const auto plot = view.plotArea();
            const int x = std::clamp(juce::roundToInt(h->position.x) - w / 2, plot.getX(),
                                     std::max(plot.getX(), plot.getRight() - w));
            int y = juce::roundToInt(h->position.y) + 14;
            if (y + 16 > plot.getBottom())
                y = juce::roundToInt(h->position.y) - 40;
            g.setColour(kGround.withAlpha(0.88f));
            g.fillRoundedRectangle(juce::Rectangle<int>(x, y, w, 16).toFloat(), 3.0f);
            g.setColour(kLit);
            g.drawText(text, x, y, w, 16, juce::Justification::centred);
        }
}

void SectionHandles::mouseMove(const juce::MouseEvent& e)
{
    const int now = slotAt(e.position).value_or(-1);
    if (now != hovered)
    {
        hovered = now;
        repaint();
    }
}

void SectionHandles::mouseExit(const juce::MouseEvent&)
{
    if (hovered >= 0 && dragSlot < 0)
    {
        hovered = -1;
        repaint();
    }
}

void SectionHandles::beginGesture(std::initializer_list<juce::RangedAudioParameter*> ps)
{
    for (auto* p : ps)
        if (p != nullptr && std::find(inGesture.begin(), inGesture.end(), p) == inGesture.end())
        {
            p->beginChangeGesture();
            inGesture.push_back(p);
        }
}

void SectionHandles::endGesture()
{
    // Closed in reverse; the edit history records one step when the last one closes.
    for (auto it = inGesture.rbegin(); it != inGesture.rend(); ++it)
        (*it)->endChangeGesture();
    inGesture.clear();
}

void SectionHandles::set(juce::RangedAudioParameter* p, double value)
{
    if (p == nullptr)
        return;
    const float normalised = p->convertTo0to1(static_cast<float>(value));
    if (normalised != p->getValue())
        p->setValueNotifyingHost(normalised);
}

void SectionHandles::mouseDown(const juce::MouseEvent& e)
{
    endGesture(); // a drag that lost its mouse-up
    dragSlot = -1;
    if (isShowing())
        grabKeyboardFocus(); // the keyboard steps follow a click on the plot
    const auto slot = slotAt(e.position);
    const auto h = slot ? handleFor(*slot) : std::nullopt;
    if (!h)
        return;
    dragSlot = h->slot;
    select(h->slot);
    dragQ = e.mods.isAltDown();
    grabOffset = h->position - e.position;
    startQ = h->q;
    repaint();
}

void SectionHandles::mouseDrag(const juce::MouseEvent& e)
{
    const auto h = handleFor(dragSlot);
    if (!h)
        return;
    if (dragQ)
    {
        // Upwards raises Q: doubles every kPixelsPerQDoubling px.
        const double dy = e.position.y - e.mouseDownPosition.y;
        auto* q = param(ids::slotQ(dragSlot));
        beginGesture({q});
        set(q, std::clamp(startQ * std::exp2(-dy / kPixelsPerQDoubling), kQMin, kQMax));
        repaint();
        return;
    }
    const auto plot = view.plotArea().toFloat();
    const auto target = e.position + grabOffset;
    const double x = std::clamp(target.x, plot.getX(), plot.getRight());
    auto* freq = param(ids::slotFreq(dragSlot));
    auto* gain = h->hasGain ? param(ids::slotGain(dragSlot)) : nullptr;
    beginGesture({freq, gain});
    set(freq, std::clamp(view.frequencyForX(x), kFreqMinHz, kFreqMaxHz));
    if (gain != nullptr)
        set(gain, std::clamp(view.dbForY(target.y), kGainMinDb, kGainMaxDb));
    repaint();
}

void SectionHandles::mouseUp(const juce::MouseEvent& e)
{
    endGesture();
    dragSlot = -1;
    hovered = slotAt(e.position).value_or(-1);
    repaint();
}

void SectionHandles::mouseDoubleClick(const juce::MouseEvent& e)
{
    const auto slot = slotAt(e.position);
    if (!slot)
        return;
    reset(*slot);
}

void SectionHandles::reset(int slot)
{
    endGesture();
    auto* freq = param(ids::slotFreq(slot));
    auto* gain = param(ids::slotGain(slot));
    auto* q = param(ids::slotQ(slot));
    beginGesture({freq, gain, q});
    for (auto* p : {freq, gain, q})
        if (p != nullptr && p->getValue() != p->getDefaultValue())
            p->setValueNotifyingHost(p->getDefaultValue());
    endGesture();
    describe();
    repaint();
}

void SectionHandles::step(int slot, double octaves, double db, double qFactor)
{
    const auto h = handleFor(slot);
    if (!h || dragSlot >= 0)
        return;
    endGesture();
    auto* freq = octaves != 0.0 ? param(ids::slotFreq(slot)) : nullptr;
    auto* gain = db != 0.0 && h->hasGain ? param(ids::slotGain(slot)) : nullptr;
    auto* q = qFactor != 1.0 ? param(ids::slotQ(slot)) : nullptr;
    beginGesture({freq, gain, q});
    set(freq, std::clamp(h->freqHz * std::exp2(octaves), kFreqMinHz, kFreqMaxHz));
    set(gain, std::clamp(h->gainDb + db, kGainMinDb, kGainMaxDb));
    set(q, std::clamp(h->q * qFactor, kQMin, kQMax));
    endGesture();
    describe();
    repaint();
}

int SectionHandles::selectedSlot() const noexcept
{
    return selected >= 0 && handleFor(selected) ? selected : -1;
}

void SectionHandles::select(int slot)
{
    selected = handleFor(slot) ? slot : -1;
    describe();
    repaint();
}

void SectionHandles::describe()
{
    const int s = selectedSlot();
    setDescription(s >= 0 ? readout(s) : juce::String());
    if (auto* a = getAccessibilityHandler())
        a->notifyAccessibilityEvent(juce::AccessibilityEvent::valueChanged);
}

std::unique_ptr<juce::AccessibilityHandler> SectionHandles::createAccessibilityHandler()
{
    return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
}

bool SectionHandles::keyPressed(const juce::KeyPress& key)
{
    const auto all = handles();
    if (all.empty())
        return false;
    const int code = key.getKeyCode();
    const bool shift = key.getModifiers().isShiftDown();
    if (key.getModifiers().isCommandDown() || key.getModifiers().isAltDown())
        return false; // the editor's shortcuts (undo, redo)
    if (code == juce::KeyPress::tabKey)
    {
        // Next (Shift: previous) enabled slot in slot order, wrapping around.
        const int now = selectedSlot();
        int next = shift ? all.back().slot : all.front().slot;
        if (now >= 0)
        {
            const auto it = std::find_if(all.begin(), all.end(),
                                         [now](const Handle& h) { return h.slot == now; });
            const auto i = static_cast<int>(std::distance(all.begin(), it));
            const int n = static_cast<int>(all.size());
            next = all[static_cast<size_t>((i + (shift ? n - 1 : 1)) % n)].slot;
        }
        select(next);
        return true;
    }
    const int s = selectedSlot();
    if (s < 0)
        return false;
    const double octave = shift ? kFineOctaveStep : kOctaveStep;
    const double db = shift ? kFineGainStepDb : kGainStepDb;
    const auto ch = key.getTextCharacter();
    if (code == juce::KeyPress::rightKey)
        step(s, octave, 0.0, 1.0);
    else if (code == juce::KeyPress::leftKey)
        step(s, -octave, 0.0, 1.0);
    else if (code == juce::KeyPress::upKey)
        step(s, 0.0, db, 1.0);
    else if (code == juce::KeyPress::downKey)
        step(s, 0.0, -db, 1.0);
    else if (ch == '+' || ch == '=' || code == juce::KeyPress::numberPadAdd)
        step(s, 0.0, 0.0, kWheelQFactor);
    else if (ch == '-' || ch == '_' || code == juce::KeyPress::numberPadSubtract)
        step(s, 0.0, 0.0, 1.0 / kWheelQFactor);
    else if (code == juce::KeyPress::deleteKey || code == juce::KeyPress::backspaceKey)
        reset(s);
    else if (code == juce::KeyPress::returnKey)
        openField(Field::frequency);
    else if (ch == 'g' || ch == 'G')
        openField(Field::gain);
    else if (ch == 'q' || ch == 'Q')
        openField(Field::q);
    else
        return false;
    return true;
}

void SectionHandles::focusGained(FocusChangeType)
{
    repaint();
}

void SectionHandles::focusLost(FocusChangeType)
{
    repaint();
}

bool SectionHandles::isNumberText(const juce::String& text)
{
    // The same units parseValueText (Parameters.cpp) drops, then a plain decimal number.
    auto t = text.trim().toLowerCase().removeCharacters(" ");
    for (const char* unit : {"hz", "db"})
        if (t.endsWith(unit))
            t = t.dropLastCharacters(2);
    if (t.endsWith("k"))
        t = t.dropLastCharacters(1);
    if (t.startsWithChar('+') || t.startsWithChar('-'))
        t = t.substring(1);
    const int dot = t.indexOfChar('.');
    const auto digits = t.removeCharacters(".");
    return digits.isNotEmpty() && digits.containsOnly("0123456789") &&
           (dot < 0 || t.lastIndexOfChar('.') == dot);
}

bool SectionHandles::openField(Field kind)
{
    const auto h = handleFor(selectedSlot());
    if (!h || (kind == Field::gain && !h->hasGain) || dragSlot >= 0)
        return false;
    fieldSlot = h->slot;
    fieldKind = kind;
    auto* p = param(kind == Field::frequency ? ids::slotFreq(fieldSlot)
                    : kind == Field::gain    ? ids::slotGain(fieldSlot)
                                             : ids::slotQ(fieldSlot));
    const juce::String name = kind == Field::frequency ? "frequency"
                              : kind == Field::gain    ? "gain"
                                                       : "Q";
    valueField.setTitle("Section " + juce::String(fieldSlot + 1) + " " + name);
    valueField.setTooltip("Type the section's " + name + "; Return sets it, Escape cancels");
    valueField.setTextToShowWhenEmpty(name, kRing.withAlpha(0.6f));
    valueField.setText(kind == Field::q ? juce::String(h->q, 3) : p->getCurrentValueAsText(),
                       false);
    placeField();
    valueField.setVisible(true);
    valueField.selectAll();
    if (valueField.isShowing())
        valueField.grabKeyboardFocus();
    return true;
}

juce::TextEditor* SectionHandles::field() noexcept
{
    return valueField.isVisible() ? &valueField : nullptr;
}

void SectionHandles::placeField()
{
    const auto h = handleFor(fieldSlot);
    if (!h)
        return;
    const auto plot = view.plotArea();
    const int w = 84, hgt = 20;
    const int x = std::clamp(juce::roundToInt(h->position.x) - w / 2, plot.getX(),
                             std::max(plot.getX(), plot.getRight() - w));
    int y = juce::roundToInt(h->position.y) + 14;
    if (y + hgt > plot.getBottom())
        y = juce::roundToInt(h->position.y) - 14 - hgt;
    valueField.setBounds(x, y, w, hgt);
}

void SectionHandles::resized()
{
    if (valueField.isVisible())
        placeField();
}

void SectionHandles::cancelField()
{
    if (!valueField.isVisible())
        return;
    const bool hadFocus = valueField.hasKeyboardFocus(true);
    valueField.setVisible(false);
    fieldSlot = -1;
    if (hadFocus && isShowing())
        grabKeyboardFocus();
    repaint();
}

void SectionHandles::commitField()
{
    if (!valueField.isVisible())
        return;
    const auto text = valueField.getText();
    const int slot = fieldSlot;
    const auto kind = fieldKind;
    cancelField();
    if (!handleFor(slot) || !isNumberText(text))
        return; // text the parameter cannot read leaves the value as it is
    auto* p = param(kind == Field::frequency ? ids::slotFreq(slot)
                    : kind == Field::gain    ? ids::slotGain(slot)
                                             : ids::slotQ(slot));
    if (p == nullptr)
        return;
    // The parameter's own text conversion ("2.5k", "-3 dB", "120 Hz"), clamped by its range.
    const float normalised = p->getValueForText(text);
    endGesture();
    beginGesture({p});
    if (normalised != p->getValue())
        p->setValueNotifyingHost(normalised);
    endGesture();
    describe();
    repaint();
}

bool SectionHandles::ValueField::keyPressed(const juce::KeyPress& key)
{
    // Handled here, not through onReturnKey, which JUCE delivers later by a posted message.
    if (key.getKeyCode() == juce::KeyPress::returnKey)
    {
        owner.commitField();
        return true;
    }
    if (key.getKeyCode() == juce::KeyPress::escapeKey)
    {
        owner.cancelField();
        return true;
    }
    return juce::TextEditor::keyPressed(key);
}

void SectionHandles::ValueField::focusLost(FocusChangeType cause)
{
    juce::TextEditor::focusLost(cause);
    if (isVisible())
        juce::MessageManager::callAsync(
            [safe = juce::Component::SafePointer<ValueField>(this)]
            {
                if (safe != nullptr && !safe->hasKeyboardFocus(true))
                    safe->owner.cancelField(); // clicked elsewhere: nothing typed applies
            });
}

void SectionHandles::mouseWheelMove(const juce::MouseEvent& e, const juce::MouseWheelDetails& w)
{
    const auto slot = slotAt(e.position);
    const auto h = slot ? handleFor(*slot) : std::nullopt;
    if (!h || w.deltaY == 0.0f || dragSlot >= 0)
    {
        Component::mouseWheelMove(e, w); // not ours: the parent's
        return;
    }
    // A wheel notch is one step; a smooth (touchpad) scroll counts 0.2 as a notch.
    const double notches = w.isSmooth ? w.deltaY / 0.2 : (w.deltaY > 0.0f ? 1.0 : -1.0);
    auto* q = param(ids::slotQ(*slot));
    beginGesture({q});
    set(q, std::clamp(h->q * std::pow(kWheelQFactor, notches), kQMin, kQMax));
    endGesture();
    repaint();
}

} // namespace kerf
