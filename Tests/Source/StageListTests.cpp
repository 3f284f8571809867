// The editor's stage list, comb note tuning and preset bar, built offscreen over a processor:
// each control is driven the way JUCE delivers a user's change (synchronous notifications)
// and the processor's parameters, exported chain and edit history are checked.
#include "ChainFile.h"
#include "FactoryPresets.h"
#include "KerfEditor.h"
#include "NotePitch.h"
#include "PluginProcessor.h"
#include "PresetBar.h"
#include "StageList.h"

#include <catch2/catch.hpp>

#include <cmath>
#include <cstdlib>
#include <optional>

using namespace kerf;

namespace
{
struct JuceGuard
{
    juce::ScopedJuceInitialiser_GUI init;
};

float valueOf(KerfProcessor& p, const juce::String& id)
{
    return p.state().getRawParameterValue(id)->load();
}

template <typename C> C* control(StageList& list, const juce::String& id)
{
    auto* c = dynamic_cast<C*>(list.controlFor(id));
    INFO("control " << id);
    REQUIRE(c != nullptr);
    return c;
}

/// Any descendant with this component ID.
juce::Component* findDeep(juce::Component& root, const juce::String& id)
{
    if (root.getComponentID() == id)
        return &root;
    for (auto* child : root.getChildren())
        if (auto* found = findDeep(*child, id))
            return found;
    return nullptr;
}

/// Types a value into a slider's value box and "presses Enter", as a user does.
void typeInto(juce::Slider& slider, const juce::String& text)
{
    for (auto* child : slider.getChildren())
        if (auto* box = dynamic_cast<juce::Label*>(child))
        {
            box->setText(text, juce::sendNotificationSync);
            return;
        }
    FAIL("the slider has no value box");
}

/// A temporary folder, removed afterwards.
struct TempDir
{
    juce::File dir = juce::File::getSpecialLocation(juce::File::tempDirectory)
                         .getNonexistentChildFile("kerf-presetbar-test", "", false);
    TempDir() { dir.createDirectory(); }
    ~TempDir() { dir.deleteRecursively(); }
};

/// Sets an environment variable for the scope of a test, then puts the old value back.
struct ScopedEnv
{
    std::string name;
    std::optional<std::string> old;
    ScopedEnv(const char* n, const char* value) : name(n)
    {
        if (const char* v = std::getenv(n))
            old = v;
        ::setenv(n, value, 1);
    }
    ~ScopedEnv()
    {
        if (old)
            ::setenv(name.c_str(), old->c_str(), 1);
        else
            ::unsetenv(name.c_str());
    }
};

/// Every interactive part of a component tree (buttons, boxes, sliders, text fields, scroll
/// bars) that has no accessibility title or no tooltip, as "componentID (class)" lines.
void undescribed(juce::Component& c, juce::StringArray& out)
{
    const bool interactive = dynamic_cast<juce::Button*>(&c) != nullptr ||
                             dynamic_cast<juce::ComboBox*>(&c) != nullptr ||
                             dynamic_cast<juce::Slider*>(&c) != nullptr ||
                             dynamic_cast<juce::TextEditor*>(&c) != nullptr ||
                             dynamic_cast<juce::ScrollBar*>(&c) != nullptr;
    if (interactive)
    {
        const auto* tip = dynamic_cast<juce::TooltipClient*>(&c);
        if (c.getTitle().isEmpty() || tip == nullptr ||
            const_cast<juce::TooltipClient*>(tip)->getTooltip().isEmpty())
            out.add(c.getComponentID() + " (" + typeid(c).name() + ")");
        return; // its children are its own parts (a slider's value box, an editor's bars)
    }
    for (auto* child : c.getChildren())
        undescribed(*child, out);
}
} // namespace

// ---- Note names and 12-TET frequencies ------------------------------------------------------

TEST_CASE("comb pitch: notes and frequencies follow 12-TET with A4 = 440 Hz", "[editor][notes]")
{
    // 12-tone equal temperament, f = 440 * 2^((m - 69) / 12), with MIDI note numbers (MIDI 1.0
    // specification: note 69 = A4, 60 = middle C) and the reference A4 = 440 Hz (ISO 16:1975).
    for (int m : {21, 33, 45, 57, 60, 61, 69, 70, 81, 100, 108})
    {
        const double formula = 440.0 * std::pow(2.0, (m - 69) / 12.0);
        CHECK(notes::frequencyOfNote(m) == Approx(formula).epsilon(1e-12));
        CHECK(notes::noteOfFrequency(formula) == Approx(m).margin(1e-9));
        CHECK(notes::nearestNote(formula).note == m);
        CHECK(std::abs(notes::nearestNote(formula).cents) < 1e-6);
    }
    // Table values of equal temperament at A4 = 440 Hz (from memory): A0 27.5 Hz, C4
    // 261.626 Hz, A4 440 Hz, C8 4186.01 Hz.
    CHECK(notes::frequencyOfNote(21) == Approx(27.5).margin(1e-9));
    CHECK(notes::frequencyOfNote(60) == Approx(261.626).margin(5e-4));
    CHECK(notes::frequencyOfNote(108) == Approx(4186.01).margin(5e-3));
    // A cent is 1/100 of the equal semitone: 2^(1/1200) per cent (common practice).
    CHECK(notes::frequencyOfNote(69.01) == Approx(440.0 * std::pow(2.0, 1.0 / 1200.0)));
    const auto sharp = notes::nearestNote(440.0 * std::pow(2.0, 23.0 / 1200.0));
    CHECK(sharp.note == 69);
    CHECK(sharp.cents == Approx(23.0).margin(1e-9));
}

TEST_CASE("comb pitch: note names read and written", "[editor][notes]")
{
    // Scientific pitch notation with MIDI numbers (common practice): C4 = 60, A4 = 69,
    // the octave changes between B and C, C-1 = 0.
    CHECK(notes::noteName(69) == "A4");
    CHECK(notes::noteName(60) == "C4");
    CHECK(notes::noteName(59) == "B3");
    CHECK(notes::noteName(61) == "C#4");
    CHECK(notes::noteName(0) == "C-1");
    CHECK(*notes::parseNote("D#3") == Approx(51.0));
    CHECK(*notes::parseNote("eb3") == Approx(51.0));
    CHECK(*notes::parseNote("A4") == Approx(69.0));
    CHECK(*notes::parseNote("C-1") == Approx(0.0));
    CHECK(*notes::parseNote("A4 +15") == Approx(69.15));
    CHECK(*notes::parseNote("F#2 -7 ct") == Approx(42.0 - 0.07));
    for (const char* bad : {"", "H2", "A", "A10", "A4 15", "A4 +x", "4A", "A4 +150"})
    {
        INFO("text " << bad);
        CHECK_FALSE(notes::parseNote(bad).has_value());
    }
    CHECK(notes::describeFrequency(440.0) == "A4 +0 ct");
    // E3 = MIDI 52 = 440 * 2^(-17/12) = 164.814 Hz; 164.81 Hz is 0.04 cent flat of it.
    CHECK(notes::describeFrequency(164.81) == "E3 +0 ct");
    // 150 Hz: 69 + 12 log2(150/440) = 50.37, so D3 (50) and 37 cents.
    CHECK(notes::describeFrequency(150.0) == "D3 +37 ct");
}

// ---- The stage list ---------------------------------------------------------------------------

TEST_CASE("stage list: one row per slot; each control is its parameter, one undo step each",
          "[editor][stagelist]")
{
    JuceGuard guard;
    KerfProcessor p;
    StageList list(p.state());
    list.setSize(760, 300);
    p.history().clear();

    // The echo stage, every section slot, both comb slots, then the output row.
    REQUIRE(list.numRows() == 1 + kNumSectionSlots + kNumCombSlots + 1);
    CHECK(list.rowKind(0) == StageList::Kind::echo);
    CHECK(list.rowOf(StageList::Kind::section, 0) == 1);
    CHECK(list.rowOf(StageList::Kind::comb, 1) == 1 + kNumSectionSlots + 1);
    CHECK(list.rowKind(list.numRows() - 1) == StageList::Kind::output);
    // More rows than fit: the list scrolls.
    CHECK(list.viewport().getViewedComponent()->getHeight() > list.getHeight());
    CHECK(list.viewport().isVerticalScrollBarShown());

    const int row3 = list.rowOf(StageList::Kind::section, 2);
    CHECK_FALSE(list.rowExpanded(row3));
    auto* on = control<juce::Button>(list, ids::slotOn(2));
    on->setToggleState(true, juce::sendNotificationSync);
    CHECK(valueOf(p, ids::slotOn(2)) == 1.0f);
    list.refresh();
    CHECK(list.rowExpanded(row3));
    auto* gain = control<juce::Slider>(list, ids::slotGain(2));
    CHECK(gain->isVisible()); // peaking carries a gain
    CHECK_FALSE(control<juce::Slider>(list, ids::slotOrder(2))->isVisible());

    // A typed value is one undo step of that parameter.
    REQUIRE(p.history().canUndo());
    p.history().clear();
    typeInto(*gain, "6.5 dB");
    CHECK(valueOf(p, ids::slotGain(2)) == Approx(6.5f));
    CHECK(p.history().canUndo());
    CHECK(p.undo());
    CHECK(valueOf(p, ids::slotGain(2)) == 0.0f);
    CHECK_FALSE(p.history().canUndo());     // it was one step
    CHECK(gain->getValue() == Approx(0.0)); // the control follows the parameter
    CHECK(p.redo());
    CHECK(valueOf(p, ids::slotGain(2)) == Approx(6.5f));
    // So is an arrow-key step (JUCE's slider step: upwards by its own interval).
    p.history().clear();
    CHECK(gain->keyPressed(juce::KeyPress(juce::KeyPress::upKey)));
    CHECK(valueOf(p, ids::slotGain(2)) > 6.5f);
    CHECK(valueOf(p, ids::slotGain(2)) == Approx(gain->getValue()));
    CHECK(p.undo());
    CHECK(valueOf(p, ids::slotGain(2)) == Approx(6.5f));
    CHECK_FALSE(p.history().canUndo());

    // A choice: the type box switches to high-pass (index 3); the row shows order and
    // alignment instead of gain.
    p.history().clear();
    auto* type = control<juce::ComboBox>(list, ids::slotType(2));
    type->setSelectedItemIndex(3, juce::sendNotificationSync);
    CHECK(juce::roundToInt(valueOf(p, ids::slotType(2))) == 3);
    CHECK(p.undo());
    CHECK(juce::roundToInt(valueOf(p, ids::slotType(2))) == 0);
    CHECK_FALSE(p.history().canUndo());
    CHECK(p.redo());
    list.refresh();
    CHECK_FALSE(gain->isVisible());
    CHECK(control<juce::Slider>(list, ids::slotOrder(2))->isVisible());
    CHECK(control<juce::ComboBox>(list, ids::slotAlign(2))->isVisible());

    // A typed value goes through the parameter's own text conversion ("2.5k" = 2500 Hz).
    auto* freq = control<juce::Slider>(list, ids::slotFreq(2));
    typeInto(*freq, "2.5k");
    CHECK(valueOf(p, ids::slotFreq(2)) == Approx(2500.0f));
}

TEST_CASE("stage list: a stage switched on in the list is in the exported chain",
          "[editor][stagelist]")
{
    JuceGuard guard;
    KerfProcessor p;
    StageList list(p.state());
    list.setSize(760, 400);
    REQUIRE(p.exportChain().numStages == 0); // everything off at start

    // Section 5 as a notch at 1 kHz, Q 4.
    control<juce::ComboBox>(list, ids::slotType(4))
        ->setSelectedItemIndex(5, juce::sendNotificationSync);
    auto* freq = control<juce::Slider>(list, ids::slotFreq(4));
    freq->setValue(1000.0, juce::sendNotificationSync);
    control<juce::Slider>(list, ids::slotQ(4))->setValue(4.0, juce::sendNotificationSync);
    CHECK(p.exportChain().numStages == 0); // still off
    control<juce::Button>(list, ids::slotOn(4))->setToggleState(true, juce::sendNotificationSync);
    auto chain = p.exportChain();
    REQUIRE(chain.numStages == 1);
    CHECK(chain.stages[0].type == dsp::StageType::notch);
    CHECK(chain.stages[0].freqHz == Approx(1000.0));
    CHECK(chain.stages[0].q == Approx(4.0));

    // Comb 2, feedback, at 3 ms.
    control<juce::ComboBox>(list, ids::comb(1, "mode"))
        ->setSelectedItemIndex(1, juce::sendNotificationSync);
    control<juce::Slider>(list, ids::comb(1, "delay"))->setValue(3.0, juce::sendNotificationSync);
    control<juce::Button>(list, ids::comb(1, "on"))
        ->setToggleState(true, juce::sendNotificationSync);
    // The echo stage with one reflection at 20 ms, gain 0.4.
    control<juce::Slider>(list, ids::echoDelay(0))->setValue(20.0, juce::sendNotificationSync);
    control<juce::Slider>(list, ids::echoGain(0))->setValue(0.4, juce::sendNotificationSync);
    control<juce::Button>(list, ids::echoOn)->setToggleState(true, juce::sendNotificationSync);
    chain = p.exportChain();
    int combs = 0, echoes = 0, sections = 0;
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        if (s.type == dsp::StageType::comb)
        {
            ++combs;
            CHECK(s.comb.mode == dsp::CombMode::feedback);
            CHECK(s.comb.delayMs == Approx(3.0));
        }
        else if (s.type == dsp::StageType::echoCancel)
        {
            ++echoes;
            REQUIRE(s.echo.numReflections == 1);
            CHECK(s.echo.reflections[0].delayMs == Approx(20.0));
            CHECK(s.echo.reflections[0].gain == Approx(0.4));
        }
        else
            ++sections;
    }
    CHECK(combs == 1);
    CHECK(echoes == 1);
    CHECK(sections == 1);
}

TEST_CASE("stage list: comb rows tune by note name, octave, cents or typed note",
          "[editor][stagelist][notes]")
{
    // 12-TET, A4 = 440 Hz (ISO 16:1975), MIDI note numbers (MIDI 1.0): D#3 = 51, A2 = 45.
    JuceGuard guard;
    KerfProcessor p;
    StageList list(p.state());
    list.setSize(760, 400);
    control<juce::Button>(list, ids::comb(0, "on"))
        ->setToggleState(true, juce::sendNotificationSync);
    control<juce::ComboBox>(list, ids::comb(0, "tuning"))
        ->setSelectedItemIndex(1, juce::sendNotificationSync);
    list.refresh();
    auto* text = control<juce::TextEditor>(list, "comb1_noteText");
    CHECK(text->isVisible());
    CHECK(control<juce::Slider>(list, ids::comb(0, "pitch"))->isVisible());
    CHECK_FALSE(control<juce::Slider>(list, ids::comb(0, "delay"))->isVisible());
    // The default pitch, 220 Hz, is A3 exactly.
    CHECK(text->getText() == "A3 +0 ct");

    auto pitch = [&p] { return static_cast<double>(valueOf(p, ids::comb(0, "pitch"))); };
    // The pitch parameter keeps 5 significant digits: within 0.01 Hz below 1 kHz.
    const double d3sharp = 440.0 * std::pow(2.0, (51 - 69) / 12.0); // 155.563 Hz
    p.history().clear();
    text->setText("D#3", juce::dontSendNotification);
    REQUIRE(text->onReturnKey != nullptr);
    text->onReturnKey();
    CHECK(pitch() == Approx(d3sharp).margin(0.01));
    CHECK(text->getText() == "D#3 +0 ct");
    CHECK(p.undo()); // one step
    CHECK(pitch() == Approx(220.0));
    CHECK_FALSE(p.history().canUndo());
    CHECK(p.redo());
    // The exported chain's comb is tuned to that pitch.
    const auto chain = p.exportChain();
    REQUIRE(chain.numStages == 1);
    CHECK(chain.stages[0].comb.pitchHz == Approx(d3sharp).margin(0.01));

    // Text it cannot read changes nothing.
    text->setText("H7", juce::dontSendNotification);
    text->onReturnKey();
    CHECK(pitch() == Approx(d3sharp).margin(0.01));

    // Name and octave boxes: A, octave 2 = MIDI 45 = 110 Hz.
    auto* name = control<juce::ComboBox>(list, "comb1_noteName");
    auto* octave = control<juce::ComboBox>(list, "comb1_noteOctave");
    CHECK(name->getText() == "D#");
    CHECK(octave->getText() == "3");
    name->setText("A", juce::sendNotificationSync);
    octave->setText("2", juce::sendNotificationSync);
    CHECK(pitch() == Approx(110.0).margin(0.01));
    // Fine tuning: +25 cents = 110 * 2^(25/1200).
    auto* cents = control<juce::Slider>(list, "comb1_cents");
    p.history().clear();
    typeInto(*cents, "25");
    CHECK(pitch() == Approx(110.0 * std::pow(2.0, 25.0 / 1200.0)).margin(0.01));
    CHECK(p.undo());
    CHECK_FALSE(p.history().canUndo());
    CHECK(pitch() == Approx(110.0).margin(0.01));
}

TEST_CASE("stage list: selecting a section row selects its handle, and the other way",
          "[editor][stagelist]")
{
    JuceGuard guard;
    KerfProcessor p;
    ResponseView view;
    view.setSize(600, 300);
    view.attachParameters(p.state());
    StageList list(p.state());
    list.setSize(760, 300);
    list.linkHandles(&view.sectionHandles());
    for (int slot : {3, 9})
        control<juce::Button>(list, ids::slotOn(slot))
            ->setToggleState(true, juce::sendNotificationSync);
    list.refresh();
    list.selectRow(list.rowOf(StageList::Kind::section, 3));
    CHECK(view.sectionHandles().selectedSlot() == 3);
    view.sectionHandles().select(9);
    list.refresh();
    CHECK(list.selectedRow() == list.rowOf(StageList::Kind::section, 9));
    // The selected row is scrolled into view.
    const auto shown = list.viewport().getViewArea();
    const auto* content = list.viewport().getViewedComponent();
    const auto rowBounds = content->getChildComponent(list.selectedRow())->getBoundsInParent();
    CHECK(shown.contains(rowBounds));
    // A row of a section that is off selects no handle.
    list.selectRow(list.rowOf(StageList::Kind::section, 5));
    CHECK(view.sectionHandles().selectedSlot() == -1);
    list.linkHandles(nullptr);
}

TEST_CASE("stage list and preset bar: every control has a title and a tooltip",
          "[editor][stagelist][presets]")
{
    JuceGuard guard;
    KerfProcessor p;
    StageList list(p.state());
    list.setSize(760, 300);
    PresetBar bar(p);
    bar.setSize(900, 34);
    juce::StringArray missing;
    undescribed(list, missing);
    undescribed(bar, missing);
    INFO(missing.joinIntoString("\n"));
    CHECK(missing.isEmpty());
}

// ---- The preset bar ---------------------------------------------------------------------------

TEST_CASE("preset bar: a factory preset sets the parameters the preset file holds",
          "[editor][presets]")
{
    JuceGuard guard;
    KerfProcessor p;
    PresetBar bar(p);
    bar.setSize(900, 34);
    const auto& presets = factoryPresets();
    int index = -1;
    for (int i = 0; i < presets.size(); ++i)
        if (presets[i].fileName == "mix-song-key-combs.json")
            index = i;
    REQUIRE(index >= 0);
    // The reference: the preset's file as the chain-file reader reads it.
    const auto file = readChainFile(juce::File(KERF_SOURCE_DIR)
                                        .getChildFile("Presets")
                                        .getChildFile("mix-song-key-combs.json"));
    REQUIRE(file.ok);
    REQUIRE(file.chain.numStages == 3);

    p.history().clear();
    auto* box = dynamic_cast<juce::ComboBox*>(findDeep(bar, "preset"));
    REQUIRE(box != nullptr);
    box->setSelectedId(PresetBar::kFactoryBase + index, juce::sendNotificationSync);

    const auto& hp = file.chain.stages[0];
    REQUIRE(hp.type == dsp::StageType::highPass);
    CHECK(valueOf(p, ids::slotOn(0)) == 1.0f);
    CHECK(juce::roundToInt(valueOf(p, ids::slotType(0))) == 3); // high-pass
    CHECK(valueOf(p, ids::slotFreq(0)) == Approx(hp.freqHz));
    CHECK(juce::roundToInt(valueOf(p, ids::slotOrder(0))) == hp.order);
    for (int s = 1; s < kNumSectionSlots; ++s)
        CHECK(valueOf(p, ids::slotOn(s)) == 0.0f);
    for (int c = 0; c < 2; ++c)
    {
        const auto& comb = file.chain.stages[static_cast<std::size_t>(1 + c)];
        REQUIRE(comb.type == dsp::StageType::comb);
        CHECK(valueOf(p, ids::comb(c, "on")) == 1.0f);
        CHECK(juce::roundToInt(valueOf(p, ids::comb(c, "mode"))) == 1);   // feedback
        CHECK(juce::roundToInt(valueOf(p, ids::comb(c, "tuning"))) == 1); // by pitch
        CHECK(valueOf(p, ids::comb(c, "pitch")) == Approx(comb.comb.pitchHz));
        CHECK(valueOf(p, ids::comb(c, "gain")) == Approx(comb.comb.gain));
        CHECK(valueOf(p, ids::comb(c, "mix")) == Approx(comb.comb.mix));
    }
    CHECK(p.getCurrentProgram() == index + 1);
    // A program chosen elsewhere (the host) shows in the box at the next tick.
    p.setCurrentProgram(1);
    bar.refresh();
    CHECK(box->getSelectedId() == PresetBar::kFactoryBase);
    CHECK(box->getText() == presets[0].name);
    CHECK(p.undo());
    // One undo step takes it all back.
    CHECK(p.undo());
    CHECK(p.exportChain().numStages == 0);
    CHECK_FALSE(p.history().canUndo());
}

TEST_CASE("preset bar: save as a user preset, change, load it back; delete it", "[editor][presets]")
{
    JuceGuard guard;
    TempDir tmp;
    ScopedEnv env("XDG_CONFIG_HOME", tmp.dir.getFullPathName().toRawUTF8());
    KerfProcessor p;
    REQUIRE(p.userPresets().folder().isAChildOf(tmp.dir));
    PresetBar bar(p);
    bar.setSize(900, 34);
    StageList list(p.state());
    list.setSize(760, 300);

    control<juce::Button>(list, ids::slotOn(0))->setToggleState(true, juce::sendNotificationSync);
    typeInto(*control<juce::Slider>(list, ids::slotGain(0)), "-4.5");
    typeInto(*control<juce::Slider>(list, ids::slotFreq(0)), "330");
    const auto saved = p.history().capture();
    const auto savedChain = chainToJson(p.exportChain());

    // Save as: the name field takes the name, Enter saves.
    auto* save = dynamic_cast<juce::Button*>(findDeep(bar, "saveAs"));
    auto* name = dynamic_cast<juce::TextEditor*>(findDeep(bar, "presetName"));
    REQUIRE(save != nullptr);
    REQUIRE(name != nullptr);
    CHECK_FALSE(name->isVisible());
    save->onClick();
    CHECK(name->isVisible());
    name->setText("Gallery talk, low mids", juce::dontSendNotification);
    name->onReturnKey();
    CHECK_FALSE(name->isVisible());
    CHECK(p.userPresets().contains("Gallery talk, low mids"));
    CHECK(bar.chosenUserPreset() == "Gallery talk, low mids");

    // A name the folder refuses is reported, nothing saved.
    CHECK(bar.saveAs(" padded ").isNotEmpty());
    CHECK(bar.status().startsWith("Not saved"));

    // Change everything, then load the preset from the box.
    p.setAllFlat();
    typeInto(*control<juce::Slider>(list, ids::slotGain(0)), "9");
    CHECK(p.history().capture() != saved);
    auto* box = dynamic_cast<juce::ComboBox*>(findDeep(bar, "preset"));
    REQUIRE(box != nullptr);
    box->setSelectedId(0, juce::dontSendNotification);
    int userId = 0;
    for (int i = 0; i < box->getNumItems(); ++i)
        if (box->getItemText(i) == "Gallery talk, low mids")
            userId = box->getItemId(i);
    REQUIRE(userId >= PresetBar::kUserBase);
    box->setSelectedId(userId, juce::sendNotificationSync);
    // Common practice: a saved preset reloads to the same settings.
    CHECK(valueOf(p, ids::slotOn(0)) == 1.0f);
    CHECK(valueOf(p, ids::slotGain(0)) == Approx(-4.5f));
    CHECK(valueOf(p, ids::slotFreq(0)) == Approx(330.0f));
    CHECK(chainToJson(p.exportChain()) == savedChain);
    CHECK(p.history().capture() == saved);

    // Delete asks for a second click.
    auto* del = dynamic_cast<juce::Button*>(findDeep(bar, "deletePreset"));
    REQUIRE(del != nullptr);
    CHECK(del->isEnabled());
    del->onClick();
    CHECK(p.userPresets().contains("Gallery talk, low mids"));
    del->onClick();
    CHECK_FALSE(p.userPresets().contains("Gallery talk, low mids"));
    CHECK(bar.chosenUserPreset().isEmpty());
    CHECK_FALSE(del->isEnabled());
}

TEST_CASE("preset bar: the protection indicator lights while the protection acts",
          "[editor][presets]")
{
    JuceGuard guard;
    KerfProcessor p;
    const double fs = 48000.0;
    p.setPlayConfigDetails(2, 2, fs, 256);
    p.prepareToPlay(fs, 256);
    PresetBar bar(p);
    bar.setSize(900, 34);
    auto* label = dynamic_cast<juce::Label*>(findDeep(bar, "protection"));
    REQUIRE(label != nullptr);
    bar.refresh();
    CHECK_FALSE(bar.protectionActing());
    CHECK(label->getText() == "ceiling -1.0 dB"); // on at -1 dBFS by default

    // A full-scale sine (0 dBFS) is above the -1 dBFS ceiling: the protection acts.
    juce::AudioBuffer<float> buf(2, 256);
    juce::MidiBuffer midi;
    for (int block = 0; block < 20; ++block)
    {
        for (int ch = 0; ch < 2; ++ch)
            for (int n = 0; n < 256; ++n)
                buf.setSample(ch, n,
                              static_cast<float>(std::sin(2.0 * juce::MathConstants<double>::pi *
                                                          1000.0 * (block * 256 + n) / fs)));
        p.processBlock(buf, midi);
    }
    bar.refresh();
    CHECK(bar.protectionActing());
    CHECK(label->getText() == "ceiling acting");
    // Held for a second of the 30 Hz timer, then back to standing by.
    for (int i = 0; i < 30; ++i)
        bar.refresh();
    CHECK_FALSE(bar.protectionActing());
    CHECK(label->getText() == "ceiling -1.0 dB");
}

// ---- In the editor -----------------------------------------------------------------------------

TEST_CASE("editor: the stage list and the preset bar are the editor's controls",
          "[editor][stagelist][presets]")
{
    JuceGuard guard;
    KerfProcessor p;
    REQUIRE(p.importChain(parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 1500, "gain_db": 9, "q": 1.2}]})")
                              .chain)
                .isEmpty());
    std::unique_ptr<juce::AudioProcessorEditor> editor(p.createEditor());
    auto* kerf = dynamic_cast<KerfEditor*>(editor.get());
    REQUIRE(kerf != nullptr);
    for (const auto size : {juce::Point<int>(KerfEditor::kDefaultWidth, KerfEditor::kDefaultHeight),
                            juce::Point<int>(KerfEditor::kMinWidth, KerfEditor::kMinHeight)})
    {
        editor->setSize(size.x, size.y);
        auto& list = kerf->stageList();
        auto& bar = kerf->presetBar();
        CHECK(list.isVisible());
        CHECK(bar.isVisible());
        CHECK(editor->getLocalBounds().contains(list.getBounds()));
        CHECK(editor->getLocalBounds().contains(bar.getBounds()));
        CHECK_FALSE(list.getBounds().intersects(bar.getBounds()));
        // The session buttons live in the bar, under their component IDs.
        for (const char* id : {"undo", "redo", "compare", "allFlat", "protection", "preset"})
        {
            auto* c = findDeep(*editor, id);
            INFO(id);
            REQUIRE(c != nullptr);
            CHECK(bar.isParentOf(c));
        }
    }
    // A section row selects its handle on the response display.
    auto& list = kerf->stageList();
    list.selectRow(list.rowOf(StageList::Kind::section, 0));
    CHECK(kerf->responseView().sectionHandles().selectedSlot() == 0);
    // An edit in the list reaches the exported chain the display draws.
    typeInto(*control<juce::Slider>(list, ids::slotGain(0)), "-6");
    const auto chain = p.exportChain();
    REQUIRE(chain.numStages == 1);
    CHECK(chain.stages[0].gainDb == Approx(-6.0));
}
