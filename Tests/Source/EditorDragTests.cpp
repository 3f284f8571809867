// Direct manipulation on the response display: the section handles are dragged, wheeled and
// double-clicked with synthesized mouse events, and the slot parameters are checked against
// the view's mapping and against the definition of the axes, computed here independently.
#include "ChainFile.h"
#include "KerfEditor.h"
#include "Limits.h"
#include "PluginProcessor.h"

#include <catch2/catch.hpp>

#include <cmath>
#include <cstdio>

using namespace kerf;

namespace
{
struct JuceGuard
{
    juce::ScopedJuceInitialiser_GUI init;
};

dsp::ChainSpec parse(const char* text)
{
    const auto r = parseChainJson(text);
    REQUIRE(r.ok);
    return r.chain;
}

/// A processor with one chain imported, its editor, and a fresh edit history.
struct Rig
{
    KerfProcessor processor;
    std::unique_ptr<juce::AudioProcessorEditor> editor;
    KerfEditor* kerf = nullptr;

    explicit Rig(const char* json)
    {
        REQUIRE(processor.importChain(parse(json)).isEmpty());
        editor.reset(processor.createEditor());
        kerf = dynamic_cast<KerfEditor*>(editor.get());
        REQUIRE(kerf != nullptr);
        kerf->refreshResponse();
        REQUIRE(view().waitForCurve());
        processor.history().clear();
    }
    ResponseView& view() { return kerf->responseView(); }
    SectionHandles& handles() { return view().sectionHandles(); }
    float value(const juce::String& id)
    {
        return processor.state().getRawParameterValue(id)->load();
    }
    juce::Point<float> handleAt(int slot)
    {
        for (const auto& h : handles().handles())
            if (h.slot == slot)
                return h.position;
        FAIL("no handle for slot " << slot);
        return {};
    }
};

juce::MouseEvent event(juce::Component& c, juce::Point<float> at, juce::Point<float> downAt,
                       juce::ModifierKeys mods = {}, int clicks = 1, bool dragged = false)
{
    const auto now = juce::Time::getCurrentTime();
    return juce::MouseEvent(juce::Desktop::getInstance().getMainMouseSource(), at, mods,
                            juce::MouseInputSource::defaultPressure, 0.0f, 0.0f, 0.0f, 0.0f, &c, &c,
                            now, downAt, now, clicks, dragged);
}

/// Press at `from`, drag through the midpoint to `to`, release.
void drag(SectionHandles& h, juce::Point<float> from, juce::Point<float> to,
          juce::ModifierKeys mods = {})
{
    const auto pressed = mods.withFlags(juce::ModifierKeys::leftButtonModifier);
    h.mouseDown(event(h, from, from, pressed));
    h.mouseDrag(event(h, (from + to) * 0.5f, from, pressed, 1, true));
    h.mouseDrag(event(h, to, from, pressed, 1, true));
    h.mouseUp(event(h, to, from, mods, 1, true));
}

const char* kPeaking = R"({"format": "kerf-chain", "version": 1, "stages": [
    {"type": "peaking", "freq_hz": 1000, "gain_db": 3, "q": 1.5}]})";
const char* kHighPass = R"({"format": "kerf-chain", "version": 1, "stages": [
    {"type": "high_pass", "freq_hz": 200, "order": 2, "q": 0.7071}]})";

/// Definition of a logarithmic frequency axis from fmin to fmax over the plot's width
/// (common practice; the editor's axis is documented as 20 Hz to min(fs/2, 24 kHz)).
double logAxisHz(double x, const juce::Rectangle<int>& plot, double fmin, double fmax)
{
    return fmin * std::pow(fmax / fmin, (x - plot.getX()) / plot.getWidth());
}
/// Definition of a linear dB axis: +half at the plot's top, -half at its bottom.
double linearDbAxis(double y, const juce::Rectangle<int>& plot, double half)
{
    return half - (y - plot.getY()) / plot.getHeight() * 2.0 * half;
}
} // namespace

TEST_CASE("editor: dragging a peaking handle sets frequency and gain in one undo step",
          "[editor][drag]")
{
    JuceGuard guard;
    Rig rig(kPeaking);
    auto& h = rig.handles();
    REQUIRE(h.isVisible());
    const auto plot = rig.view().plotArea();
    const auto start = rig.handleAt(0);
    // The handle sits where the view maps 1 kHz and +3 dB.
    CHECK(start.x == Approx(rig.view().xForFrequency(1000.0)).margin(1e-3));
    CHECK(start.y == Approx(rig.view().yForDb(3.0)).margin(1e-3));

    const float before[] = {rig.value(ids::slotFreq(0)), rig.value(ids::slotGain(0)),
                            rig.value(ids::slotQ(0))};
    const juce::Point<float> target(static_cast<float>(plot.getX() + 0.72 * plot.getWidth()),
                                    static_cast<float>(plot.getY() + 0.31 * plot.getHeight()));
    drag(h, start, target);
    const double freq = rig.value(ids::slotFreq(0)), gain = rig.value(ids::slotGain(0));
    // The view's own inverse mapping of the target pixel.
    const double viewHz = rig.view().frequencyForX(target.x);
    const double viewDb = rig.view().dbForY(target.y);
    // Independent: the definitions of the two axes, 20 Hz .. 24 kHz (fs 48 kHz) and
    // +-24 dB (the default scale).
    const double axisHz = logAxisHz(target.x, plot, 20.0, 24000.0);
    const double axisDb = linearDbAxis(target.y, plot, 24.0);
    std::printf("editor drag: target (%.1f, %.1f) px -> %.2f Hz, %.2f dB (axis %.2f Hz, %.2f dB)"
                "\n",
                target.x, target.y, freq, gain, axisHz, axisDb);
    CHECK(std::abs(freq / viewHz - 1.0) < 0.01);
    CHECK(std::abs(freq / axisHz - 1.0) < 0.01);
    CHECK(std::abs(gain - viewDb) < 0.1);
    CHECK(std::abs(gain - axisDb) < 0.1);
    // The check can fail: one pixel to the right is about 1 % higher, a 1 px row 0.2 dB.
    CHECK(std::abs(freq / logAxisHz(target.x + 1.0, plot, 20.0, 24000.0) - 1.0) > 0.005);
    CHECK(std::abs(gain - linearDbAxis(target.y + 1.0, plot, 24.0)) > 0.1);
    CHECK(rig.value(ids::slotQ(0)) == before[2]); // a drag leaves Q alone

    // Exactly one undo step, which restores the old values exactly.
    auto& history = rig.processor.history();
    REQUIRE(history.canUndo());
    REQUIRE(history.undo());
    CHECK_FALSE(history.canUndo());
    CHECK(rig.value(ids::slotFreq(0)) == before[0]);
    CHECK(rig.value(ids::slotGain(0)) == before[1]);
    CHECK(rig.value(ids::slotQ(0)) == before[2]);
    REQUIRE(history.redo());
    CHECK(rig.value(ids::slotFreq(0)) == static_cast<float>(freq));
    CHECK(rig.value(ids::slotGain(0)) == static_cast<float>(gain));
}

TEST_CASE("editor: a handle dragged past the plot clamps gain at the range ends", "[editor][drag]")
{
    JuceGuard guard;
    Rig rig(kPeaking);
    auto& h = rig.handles();
    const auto plot = rig.view().plotArea().toFloat();
    auto from = rig.handleAt(0);
    drag(h, from, {from.x, plot.getY() - 2000.0f});
    // Limits.h: gain range -30 .. +30 dB.
    CHECK(rig.value(ids::slotGain(0)) == static_cast<float>(dsp::limits::kGainMaxDb));
    from = rig.handleAt(0);
    drag(h, from, {from.x, plot.getBottom() + 2000.0f});
    CHECK(rig.value(ids::slotGain(0)) == static_cast<float>(dsp::limits::kGainMinDb));
    // Past the right edge: the axis' top, 24 kHz (within the parameter's 10 Hz .. 30 kHz).
    from = rig.handleAt(0);
    drag(h, from, {plot.getRight() + 500.0f, from.y});
    CHECK(rig.value(ids::slotFreq(0)) == Approx(24000.0).epsilon(1e-4));
    CHECK(rig.processor.history().canUndo());
}

TEST_CASE("editor: a wheel notch multiplies Q by the stated factor; Alt-drag changes Q",
          "[editor][drag]")
{
    JuceGuard guard;
    Rig rig(kPeaking);
    auto& h = rig.handles();
    const auto at = rig.handleAt(0);
    const double q0 = rig.value(ids::slotQ(0));
    REQUIRE(q0 == Approx(1.5));
    juce::MouseWheelDetails notch{};
    notch.deltaY = 50.0f / 256.0f; // one notch upwards (JUCE on Linux)
    notch.isSmooth = false;
    h.mouseWheelMove(event(h, at, at), notch);
    // Stated factor 2^(1/4) per notch; Q is stored to 4 significant digits (Parameters.cpp).
    CHECK(rig.value(ids::slotQ(0)) == Approx(q0 * std::pow(2.0, 0.25)).epsilon(5e-4));
    CHECK(rig.value(ids::slotQ(0)) != Approx(q0).epsilon(5e-4));
    notch.deltaY = -notch.deltaY;
    h.mouseWheelMove(event(h, at, at), notch);
    h.mouseWheelMove(event(h, at, at), notch);
    CHECK(rig.value(ids::slotQ(0)) == Approx(q0 / std::pow(2.0, 0.25)).epsilon(1e-3));
    // Each notch is one undo step.
    auto& history = rig.processor.history();
    REQUIRE(history.undo());
    CHECK(rig.value(ids::slotQ(0)) == Approx(q0).epsilon(1e-3));
    REQUIRE(history.undo());
    REQUIRE(history.undo());
    CHECK(rig.value(ids::slotQ(0)) == static_cast<float>(q0));
    CHECK_FALSE(history.canUndo());
    // Alt-drag 60 px upwards doubles Q, leaving frequency and gain alone.
    const float f0 = rig.value(ids::slotFreq(0)), g0 = rig.value(ids::slotGain(0));
    drag(h, at, at.translated(0.0f, -60.0f), juce::ModifierKeys::altModifier);
    CHECK(rig.value(ids::slotQ(0)) == Approx(2.0 * q0).epsilon(5e-4));
    CHECK(rig.value(ids::slotFreq(0)) == f0);
    CHECK(rig.value(ids::slotGain(0)) == g0);
    // Many notches down stop at the range end (Limits.h: Q 0.025 .. 40).
    for (int i = 0; i < 60; ++i)
        h.mouseWheelMove(event(h, at, at), notch);
    CHECK(rig.value(ids::slotQ(0)) == Approx(dsp::limits::kQMin).epsilon(1e-4));
}

TEST_CASE("editor: double-clicking a handle resets the section in one undo step", "[editor][drag]")
{
    JuceGuard guard;
    Rig rig(kPeaking);
    auto& h = rig.handles();
    const auto at = rig.handleAt(0);
    const float before[] = {rig.value(ids::slotFreq(0)), rig.value(ids::slotGain(0)),
                            rig.value(ids::slotQ(0))};
    // A double-click arrives as press, release, press, release, then the double-click.
    const auto left = juce::ModifierKeys(juce::ModifierKeys::leftButtonModifier);
    h.mouseDown(event(h, at, at, left));
    h.mouseUp(event(h, at, at));
    h.mouseDown(event(h, at, at, left, 2));
    h.mouseUp(event(h, at, at, {}, 2));
    h.mouseDoubleClick(event(h, at, at, {}, 2));
    // Defaults (Parameters.cpp): the slot's spread frequency (slot 0: 40 Hz), 0 dB, Q 1.
    CHECK(rig.value(ids::slotFreq(0)) == Approx(defaultSlotFreqHz(0)).epsilon(1e-6));
    CHECK(defaultSlotFreqHz(0) == Approx(40.0));
    CHECK(rig.value(ids::slotGain(0)) == 0.0f);
    CHECK(rig.value(ids::slotQ(0)) == 1.0f);
    auto& history = rig.processor.history();
    REQUIRE(history.undo());
    CHECK_FALSE(history.canUndo());
    CHECK(rig.value(ids::slotFreq(0)) == before[0]);
    CHECK(rig.value(ids::slotGain(0)) == before[1]);
    CHECK(rig.value(ids::slotQ(0)) == before[2]);
}

TEST_CASE("editor: a gain-less handle moves along frequency only; hover shows a readout",
          "[editor][drag]")
{
    JuceGuard guard;
    Rig rig(kHighPass);
    auto& h = rig.handles();
    // A stored gain the high-pass does not use must survive a drag.
    auto* gainParam = rig.processor.state().getParameter(ids::slotGain(0));
    gainParam->setValueNotifyingHost(gainParam->convertTo0to1(5.0f));
    rig.processor.history().clear();
    const auto at = rig.handleAt(0);
    CHECK(at.y == Approx(rig.view().yForDb(0.0)).margin(1e-3)); // drawn on the 0 dB line
    const auto plot = rig.view().plotArea();
    const juce::Point<float> target(at.x + 80.0f, at.y - 70.0f);
    drag(h, at, target);
    CHECK(rig.value(ids::slotGain(0)) == 5.0f);
    CHECK(std::abs(rig.value(ids::slotFreq(0)) / logAxisHz(target.x, plot, 20.0, 24000.0) - 1.0) <
          0.01);
    CHECK(rig.value(ids::slotFreq(0)) > 400.0f); // 80 px is more than an octave here
    // Hover: highlighted, and the readout names the type, frequency and Q (no gain).
    const auto now = rig.handleAt(0);
    h.mouseMove(event(h, now, now));
    CHECK(h.hoveredSlot() == 0);
    const auto text = h.readout(0);
    CHECK(text.contains("High-pass"));
    CHECK(text.contains("Hz"));
    CHECK(text.contains("Q 0.71"));
    CHECK_FALSE(text.contains("dB"));
    h.mouseMove(event(h, now.translated(40.0f, 40.0f), now));
    CHECK(h.hoveredSlot() == -1);
    // Only the magnitude view has handles.
    rig.view().setMode(ResponseView::Mode::phase);
    CHECK_FALSE(h.isVisible());
    rig.view().setMode(ResponseView::Mode::magnitude);
    CHECK(h.isVisible());
}

// ---- Keyboard: selection, steps and typed values ------------------------------------------

namespace
{
const char* kThreePeaking = R"({"format": "kerf-chain", "version": 1, "stages": [
    {"type": "peaking", "freq_hz": 100, "gain_db": 2, "q": 1},
    {"type": "peaking", "freq_hz": 1000, "gain_db": 3, "q": 1.5},
    {"type": "peaking", "freq_hz": 8000, "gain_db": -4, "q": 2}]})";

bool press(SectionHandles& h, int code, juce::ModifierKeys mods = {}, juce::juce_wchar ch = 0)
{
    return h.keyPressed(juce::KeyPress(code, mods, ch));
}
const juce::ModifierKeys kShift(juce::ModifierKeys::shiftModifier);

/// Opens the field with `key`, types `text` and presses `finish` in the field.
void typeInto(SectionHandles& h, int key, juce::juce_wchar ch, const juce::String& text,
              int finish = juce::KeyPress::returnKey)
{
    REQUIRE(press(h, key, {}, ch));
    auto* f = h.field();
    REQUIRE(f != nullptr);
    f->setText(text, false);
    CHECK(f->keyPressed(juce::KeyPress(finish)));
    CHECK(h.field() == nullptr);
}

int undoSteps(KerfProcessor& p)
{
    int n = 0;
    while (p.history().canUndo() && p.history().undo())
        ++n;
    return n;
}
} // namespace

TEST_CASE("editor keys: Tab and Shift+Tab move the selection in slot order", "[editor][keys]")
{
    JuceGuard guard;
    Rig rig(kThreePeaking);
    auto& h = rig.handles();
    CHECK(h.getWantsKeyboardFocus());
    CHECK(h.getTitle() == "Section handles");
    // Switch the middle slot off: the selection skips it.
    auto* on = rig.processor.state().getParameter(ids::slotOn(1));
    on->setValueNotifyingHost(0.0f);
    CHECK(h.selectedSlot() == -1);
    CHECK(press(h, juce::KeyPress::tabKey));
    CHECK(h.selectedSlot() == 0);
    CHECK(h.getDescription().startsWith("Section 1"));
    CHECK(press(h, juce::KeyPress::tabKey));
    CHECK(h.selectedSlot() == 2);
    CHECK(press(h, juce::KeyPress::tabKey));
    CHECK(h.selectedSlot() == 0); // wraps around
    CHECK(press(h, juce::KeyPress::tabKey, kShift));
    CHECK(h.selectedSlot() == 2);
    on->setValueNotifyingHost(1.0f);
    CHECK(press(h, juce::KeyPress::tabKey, kShift));
    CHECK(h.selectedSlot() == 1);
    CHECK(press(h, juce::KeyPress::tabKey, kShift));
    CHECK(h.selectedSlot() == 0);
    // Keys that are not ours (Ctrl+Z for the editor's undo) pass on.
    rig.processor.history().clear();
    CHECK_FALSE(press(h, 'z', juce::ModifierKeys::commandModifier, 'z'));
    CHECK_FALSE(rig.processor.history().canUndo());
}

TEST_CASE("editor keys: arrows step frequency by 1/12 octave and gain by 0.5 dB, one undo "
          "step each",
          "[editor][keys]")
{
    JuceGuard guard;
    Rig rig(kThreePeaking);
    auto& h = rig.handles();
    h.select(1);
    REQUIRE(h.selectedSlot() == 1);
    const float f0 = rig.value(ids::slotFreq(1)), g0 = rig.value(ids::slotGain(1)),
                q0 = rig.value(ids::slotQ(1));
    REQUIRE(f0 == 1000.0f);
    // A twelfth-octave (semitone) step is a frequency ratio of 2^(1/12) (definition of the
    // equal-tempered semitone; common practice). Frequencies are stored to 5 significant
    // digits (Parameters.cpp), so within 1e-4 relative; a 1/13 octave step would be 0.4 % off.
    CHECK(press(h, juce::KeyPress::rightKey));
    const double semitone = std::pow(2.0, 1.0 / 12.0);
    CHECK(rig.value(ids::slotFreq(1)) == Approx(1000.0 * semitone).epsilon(1e-4));
    CHECK(rig.value(ids::slotFreq(1)) != Approx(1000.0 * std::pow(2.0, 1.0 / 13.0)).epsilon(1e-4));
    CHECK(press(h, juce::KeyPress::rightKey, kShift)); // fine: 1/48 octave
    CHECK(rig.value(ids::slotFreq(1)) ==
          Approx(1000.0 * semitone * std::pow(2.0, 1.0 / 48.0)).epsilon(1e-4));
    CHECK(press(h, juce::KeyPress::leftKey));
    CHECK(rig.value(ids::slotFreq(1)) == Approx(1000.0 * std::pow(2.0, 1.0 / 48.0)).epsilon(1e-4));
    // Up adds exactly 0.5 dB (gain is stored on a 0.01 dB grid; 3.5 is on it).
    CHECK(press(h, juce::KeyPress::upKey));
    CHECK(rig.value(ids::slotGain(1)) == 3.5f);
    CHECK(press(h, juce::KeyPress::downKey, kShift)); // fine: 0.1 dB
    CHECK(rig.value(ids::slotGain(1)) == Approx(3.4).margin(1e-5));
    // + multiplies Q by 2^(1/4), - divides (the wheel's factor; Q stored to 4 digits).
    CHECK(press(h, '+', kShift, '+'));
    CHECK(rig.value(ids::slotQ(1)) == Approx(1.5 * std::pow(2.0, 0.25)).epsilon(5e-4));
    CHECK(press(h, '-', {}, '-'));
    CHECK(rig.value(ids::slotQ(1)) == Approx(1.5).epsilon(5e-4));
    // The other slots are untouched.
    CHECK(rig.value(ids::slotFreq(0)) == 100.0f);
    CHECK(rig.value(ids::slotFreq(2)) == 8000.0f);
    // Seven keys, seven undo steps, back to exactly the old values.
    CHECK(undoSteps(rig.processor) == 7);
    CHECK(rig.value(ids::slotFreq(1)) == f0);
    CHECK(rig.value(ids::slotGain(1)) == g0);
    CHECK(rig.value(ids::slotQ(1)) == q0);
}

TEST_CASE("editor keys: steps clamp at the range ends; Delete resets; gain-less handles keep "
          "their gain",
          "[editor][keys]")
{
    JuceGuard guard;
    Rig rig(kPeaking);
    auto& h = rig.handles();
    CHECK(press(h, juce::KeyPress::tabKey));
    REQUIRE(h.selectedSlot() == 0);
    // Limits.h: gain -30 .. +30 dB, frequency 10 Hz .. 30 kHz.
    for (int i = 0; i < 70; ++i)
        press(h, juce::KeyPress::upKey);
    CHECK(rig.value(ids::slotGain(0)) == static_cast<float>(dsp::limits::kGainMaxDb));
    for (int i = 0; i < 130; ++i)
        press(h, juce::KeyPress::downKey);
    CHECK(rig.value(ids::slotGain(0)) == static_cast<float>(dsp::limits::kGainMinDb));
    for (int i = 0; i < 12 * 6; ++i) // six octaves up from 1 kHz passes 30 kHz
        press(h, juce::KeyPress::rightKey);
    CHECK(rig.value(ids::slotFreq(0)) == static_cast<float>(dsp::limits::kFreqMaxHz));
    for (int i = 0; i < 12 * 12; ++i)
        press(h, juce::KeyPress::leftKey);
    CHECK(rig.value(ids::slotFreq(0)) == static_cast<float>(dsp::limits::kFreqMinHz));
    // Delete: the defaults (Parameters.cpp: slot 0 at 40 Hz, 0 dB, Q 1), one undo step.
    rig.processor.history().clear();
    CHECK(press(h, juce::KeyPress::deleteKey));
    CHECK(rig.value(ids::slotFreq(0)) == Approx(40.0).epsilon(1e-6));
    CHECK(rig.value(ids::slotGain(0)) == 0.0f);
    CHECK(rig.value(ids::slotQ(0)) == 1.0f);
    CHECK(undoSteps(rig.processor) == 1);
    CHECK(rig.value(ids::slotFreq(0)) == static_cast<float>(dsp::limits::kFreqMinHz));

    Rig hp(kHighPass);
    auto& k = hp.handles();
    auto* gainParam = hp.processor.state().getParameter(ids::slotGain(0));
    gainParam->setValueNotifyingHost(gainParam->convertTo0to1(5.0f));
    hp.processor.history().clear();
    k.select(0);
    press(k, juce::KeyPress::upKey);
    CHECK(hp.value(ids::slotGain(0)) == 5.0f);
    CHECK_FALSE(hp.processor.history().canUndo());
    CHECK_FALSE(k.openField(SectionHandles::Field::gain)); // nothing to type there
    CHECK(k.field() == nullptr);
}

TEST_CASE("editor keys: typed values go through the parameter's text forms; Escape cancels",
          "[editor][keys]")
{
    JuceGuard guard;
    Rig rig(kThreePeaking);
    auto& h = rig.handles();
    h.select(1);
    // Enter types a frequency, G a gain, Q a Q; each value applied is one undo step.
    typeInto(h, juce::KeyPress::returnKey, 0, "2.5k");
    CHECK(rig.value(ids::slotFreq(1)) == 2500.0f);
    typeInto(h, 'g', 'g', "-3 dB");
    CHECK(rig.value(ids::slotGain(1)) == -3.0f);
    typeInto(h, juce::KeyPress::returnKey, 0, "1.25 kHz");
    CHECK(rig.value(ids::slotFreq(1)) == 1250.0f);
    typeInto(h, juce::KeyPress::returnKey, 0, "120 Hz");
    CHECK(rig.value(ids::slotFreq(1)) == 120.0f);
    typeInto(h, 'q', 'q', "0.7");
    CHECK(rig.value(ids::slotQ(1)) == 0.7f);
    CHECK(undoSteps(rig.processor) == 5);
    CHECK(rig.value(ids::slotFreq(1)) == 1000.0f);
    CHECK(rig.value(ids::slotGain(1)) == 3.0f);
    CHECK(rig.value(ids::slotQ(1)) == 1.5f);
    // Text the parameter cannot read changes nothing (its converter would read "abc" as 0).
    typeInto(h, juce::KeyPress::returnKey, 0, "abc");
    typeInto(h, 'g', 'g', "");
    typeInto(h, 'q', 'q', "1.2.3");
    CHECK(rig.value(ids::slotFreq(1)) == 1000.0f);
    CHECK(rig.value(ids::slotGain(1)) == 3.0f);
    CHECK(rig.value(ids::slotQ(1)) == 1.5f);
    CHECK_FALSE(rig.processor.history().canUndo());
    // Escape closes the field, nothing applied.
    typeInto(h, juce::KeyPress::returnKey, 0, "5k", juce::KeyPress::escapeKey);
    CHECK(rig.value(ids::slotFreq(1)) == 1000.0f);
    CHECK_FALSE(rig.processor.history().canUndo());
    // The field opens with the current value in the parameter's own text.
    REQUIRE(press(h, juce::KeyPress::returnKey));
    REQUIRE(h.field() != nullptr);
    CHECK(h.field()->getText() == "1.00 kHz");
    h.cancelField();
    CHECK(SectionHandles::isNumberText("+3db"));
    CHECK_FALSE(SectionHandles::isNumberText("k"));
}
