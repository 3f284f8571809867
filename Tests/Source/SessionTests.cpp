// What a user does with the processor between sounds: user presets in the XDG config folder,
// chain-file import and export, the two comparison slots (A/B), undo and redo of every edit,
// and "all flat".
#include "ChainFile.h"
#include "Dsp/Splatter.h"
#include "PluginProcessor.h"
#include "Response/SystemFunction.h"

#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <optional>
#include <random>
#include <thread>

using namespace kerf;

namespace
{
struct JuceGuard
{
    juce::ScopedJuceInitialiser_GUI init;
};

/// A temporary folder, removed afterwards.
struct TempDir
{
    juce::File dir = juce::File::getSpecialLocation(juce::File::tempDirectory)
                         .getNonexistentChildFile("kerf-session-test", "", false);
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
        if (value != nullptr)
            ::setenv(n, value, 1);
        else
            ::unsetenv(n);
    }
    ~ScopedEnv()
    {
        if (old)
            ::setenv(name.c_str(), old->c_str(), 1);
        else
            ::unsetenv(name.c_str());
    }
};

float valueOf(KerfProcessor& p, const juce::String& id)
{
    return p.state().getRawParameterValue(id)->load();
}

/// Sets a parameter the way a control does: a whole gesture (press, move, release).
void edit(KerfProcessor& p, const juce::String& id, float plainValue)
{
    auto* param = p.state().getParameter(id);
    param->beginChangeGesture();
    param->setValueNotifyingHost(param->convertTo0to1(plainValue));
    param->endChangeGesture();
}

/// Invented chains for the comparison tests.
const char* const kChainA = R"({"format": "kerf-chain", "version": 1, "stages": [
  {"type": "peaking", "freq_hz": 300, "gain_db": -9, "q": 1},
  {"type": "high_shelf", "freq_hz": 5000, "gain_db": 3}]})";
const char* const kChainB = R"({"format": "kerf-chain", "version": 1, "stages": [
  {"type": "low_shelf", "freq_hz": 200, "gain_db": 4, "slope": 0.8},
  {"type": "notch", "freq_hz": 160, "q": 2},
  {"type": "comb", "delay_ms": 2.5, "gain": 0.5, "mix": 0.5, "delay_change": "sweep"},
  {"type": "echo_cancel", "reflections": [{"delay_ms": 6, "gain": 0.3}]}]})";

dsp::ChainSpec parse(const char* text)
{
    const auto r = parseChainJson(text);
    REQUIRE(r.ok);
    return r.chain;
}

/// A component anywhere under `root` with this component ID.
juce::Component* findDeep(juce::Component& root, const juce::String& id)
{
    if (root.getComponentID() == id)
        return &root;
    for (auto* child : root.getChildren())
        if (auto* found = findDeep(*child, id))
            return found;
    return nullptr;
}

bool sameChain(const dsp::ChainSpec& a, const dsp::ChainSpec& b)
{
    return chainToJson(a) == chainToJson(b);
}
} // namespace

TEST_CASE("user presets: the folder follows XDG_CONFIG_HOME", "[plugin][presets]")
{
    // XDG Base Directory Specification 0.8: $XDG_CONFIG_HOME, or $HOME/.config when it is
    // unset or empty; a relative path is invalid and is ignored.
    JuceGuard guard;
    const auto home = juce::File::getSpecialLocation(juce::File::userHomeDirectory);
    {
        ScopedEnv env("XDG_CONFIG_HOME", "/tmp/kerf-xdg-elsewhere");
        CHECK(kerfConfigFolder() == juce::File("/tmp/kerf-xdg-elsewhere/kerf"));
        CHECK(UserPresetFolder::defaultFolder() ==
              juce::File("/tmp/kerf-xdg-elsewhere/kerf/presets"));
        KerfProcessor p;
        CHECK(p.userPresets().folder() == juce::File("/tmp/kerf-xdg-elsewhere/kerf/presets"));
    }
    {
        ScopedEnv env("XDG_CONFIG_HOME", nullptr);
        CHECK(kerfConfigFolder() == home.getChildFile(".config/kerf"));
        CHECK(UserPresetFolder::defaultFolder() == home.getChildFile(".config/kerf/presets"));
    }
    {
        ScopedEnv env("XDG_CONFIG_HOME", "");
        CHECK(UserPresetFolder::defaultFolder() == home.getChildFile(".config/kerf/presets"));
    }
    {
        ScopedEnv env("XDG_CONFIG_HOME", "relative/config");
        CHECK(UserPresetFolder::defaultFolder() == home.getChildFile(".config/kerf/presets"));
    }
}

TEST_CASE("user presets: save, list, load and delete as chain files", "[plugin][presets]")
{
    // Common practice: a saved preset reloads to the same settings, in another session too;
    // the file is an ordinary chain file (README.md, "Chain files") that kerf render reads.
    JuceGuard guard;
    TempDir tmp;
    ScopedEnv env("XDG_CONFIG_HOME", tmp.dir.getFullPathName().toRawUTF8());
    const auto folder = tmp.dir.getChildFile("kerf/presets");

    KerfProcessor p;
    CHECK(p.userPresets().list().isEmpty()); // no folder yet: an empty list, no error
    REQUIRE(p.importChain(parse(kChainB)).isEmpty());
    const auto chainB = p.exportChain();
    CHECK(p.saveUserPreset("Vestry: organ hum/hiss").isEmpty());
    REQUIRE(p.importChain(parse(kChainA)).isEmpty());
    const auto chainA = p.exportChain();
    CHECK(p.saveUserPreset("attic take").isEmpty());

    // Two files directly in the folder (the '/' of a name never makes a sub-folder), each a
    // chain file whose "name" is the preset's name.
    const auto files = folder.findChildFiles(juce::File::findFiles, false, "*.json");
    CHECK(files.size() == 2);
    for (const auto& f : files)
    {
        const auto r = readChainFile(f);
        INFO(f.getFullPathName() << ": " << r.error);
        CHECK(r.ok);
        CHECK((r.name == "Vestry: organ hum/hiss" || r.name == "attic take"));
    }
    // Listed by name, case-insensitively.
    const auto listed = p.userPresets().list();
    REQUIRE(listed.size() == 2);
    CHECK(listed[0].name == "attic take");
    CHECK(listed[1].name == "Vestry: organ hum/hiss");

    // Another processor (another session) loads them.
    KerfProcessor q;
    CHECK(q.loadUserPreset("Vestry: organ hum/hiss").isEmpty());
    CHECK(sameChain(q.exportChain(), chainB));
    CHECK(q.loadUserPreset("attic take").isEmpty());
    CHECK(sameChain(q.exportChain(), chainA));

    // Saving under an existing name replaces that preset; names are checked.
    CHECK(q.importChain(parse(kChainB)).isEmpty());
    CHECK(q.saveUserPreset("attic take").isEmpty());
    CHECK(q.userPresets().list().size() == 2);
    CHECK(q.loadUserPreset("attic take").isEmpty());
    CHECK(sameChain(q.exportChain(), chainB));
    CHECK(q.saveUserPreset("").isNotEmpty());
    CHECK(q.saveUserPreset(" padded ").isNotEmpty());
    CHECK(q.saveUserPreset(juce::String::repeatedString("x", 101)).isNotEmpty());

    // A file that is not a chain file is left out of the list, with a reason.
    REQUIRE(folder.getChildFile("broken.json").replaceWithText("{\"format\": \"other\"}"));
    juce::StringArray problems;
    CHECK(q.userPresets().list(&problems).size() == 2);
    REQUIRE(problems.size() == 1);
    CHECK(problems[0].startsWith("broken.json"));

    // Delete, then it is gone; loading or deleting a missing preset says so and changes
    // nothing.
    CHECK(q.deleteUserPreset("attic take").isEmpty());
    CHECK_FALSE(q.userPresets().contains("attic take"));
    CHECK(q.userPresets().list().size() == 1);
    const auto before = q.exportChain();
    CHECK(q.loadUserPreset("attic take").contains("no user preset"));
    CHECK(q.deleteUserPreset("attic take").contains("no user preset"));
    CHECK(sameChain(q.exportChain(), before));
}

TEST_CASE("chain files: export and import through files", "[plugin][presets]")
{
    // Common practice: an exported chain imports to the same settings; the exported file is
    // read by the chain-file reader that kerf render uses; a bad file changes nothing.
    JuceGuard guard;
    TempDir tmp;
    KerfProcessor p;
    REQUIRE(p.importChain(parse(kChainB)).isEmpty());
    // The comb's delay change travels through the parameters (combN_change).
    const auto held = p.exportChain();
    int sweeping = 0;
    for (int i = 0; i < held.numStages; ++i)
        if (held.stages[static_cast<std::size_t>(i)].type == dsp::StageType::comb &&
            held.stages[static_cast<std::size_t>(i)].enabled)
            sweeping += held.stages[static_cast<std::size_t>(i)].comb.sweepDelay ? 1 : 0;
    CHECK(sweeping == 1);
    const auto file = tmp.dir.getChildFile("out.json");
    CHECK(p.exportChainFile(file, "exported").isEmpty());
    const auto r = readChainFile(file);
    REQUIRE(r.ok);
    CHECK(r.name == "exported");
    CHECK(sameChain(r.chain, p.exportChain()));

    KerfProcessor q;
    CHECK(q.importChainFile(file).isEmpty());
    CHECK(sameChain(q.exportChain(), p.exportChain()));
    REQUIRE(
        tmp.dir.getChildFile("bad.json")
            .replaceWithText(
                R"({"format": "kerf-chain", "version": 1, "stages": [{"type": "peaking", "freq_hz": 5}]})"));
    const auto error = q.importChainFile(tmp.dir.getChildFile("bad.json"));
    CHECK(error.contains("freq_hz"));
    CHECK(sameChain(q.exportChain(), p.exportChain()));
    CHECK(q.exportChainFile(tmp.dir).isNotEmpty()); // a folder is not a file
}

TEST_CASE("undo: a parameter edit, a preset load and an A/B switch each undo and redo",
          "[plugin][undo]")
{
    // Common practice for undo/redo: undo returns every parameter to exactly its value before
    // the step, redo to exactly its value after; one gesture (press to release) is one step.
    JuceGuard guard;
    KerfProcessor p;
    CHECK_FALSE(p.history().canUndo());

    // A parameter edit: a drag through several values is one step.
    const auto start = p.history().capture();
    auto* gain = p.state().getParameter(ids::slotGain(3));
    gain->beginChangeGesture();
    for (float v : {1.0f, 2.5f, -4.0f})
        gain->setValueNotifyingHost(gain->convertTo0to1(v));
    gain->endChangeGesture();
    CHECK(valueOf(p, ids::slotGain(3)) == -4.0f);
    CHECK(p.history().undoName() == "Change Section 4 gain");
    CHECK(p.undo());
    CHECK(p.history().capture() == start);
    CHECK_FALSE(p.history().canUndo());
    CHECK(p.redo());
    CHECK(valueOf(p, ids::slotGain(3)) == -4.0f);

    // A preset load (a factory program) is one step.
    const auto beforePreset = p.history().capture();
    p.setCurrentProgram(3);
    const auto afterPreset = p.history().capture();
    REQUIRE(afterPreset != beforePreset);
    CHECK(p.history().undoName() == "Load preset " + p.getProgramName(3));
    CHECK(p.getCurrentProgram() == 3);
    CHECK(p.undo());
    CHECK(p.history().capture() == beforePreset);
    CHECK(p.getCurrentProgram() == 0); // the program number follows
    CHECK(p.redo());
    CHECK(p.history().capture() == afterPreset);
    CHECK(p.getCurrentProgram() == 3);

    // An A/B switch: B starts as a copy of A, is edited, then the switch back to A is undone
    // and redone, slots and the active one included.
    const auto aSettings = p.history().capture();
    p.switchSlot();
    CHECK(p.activeSlot() == CompareSlot::b);
    CHECK(p.history().capture() == aSettings);
    edit(p, ids::slotFreq(0), 440.0f);
    edit(p, ids::outputGain, -6.0f);
    const auto bSettings = p.history().capture();
    p.switchSlot();
    CHECK(p.activeSlot() == CompareSlot::a);
    CHECK(p.history().capture() == aSettings);
    CHECK(p.history().undoName() == "Switch to A");
    CHECK(p.undo());
    CHECK(p.activeSlot() == CompareSlot::b);
    CHECK(p.history().capture() == bSettings);
    CHECK(p.redo());
    CHECK(p.activeSlot() == CompareSlot::a);
    CHECK(p.history().capture() == aSettings);
    // The slots are as the switch left them: switching again brings B's edits back.
    p.switchSlot();
    CHECK(p.history().capture() == bSettings);

    // Undo walks back through every step, in order, to the very start.
    int steps = 0;
    while (p.undo())
        ++steps;
    // the drag, the preset, the first switch, two edits on B, switch to A, switch to B
    CHECK(steps == 7);
    CHECK(p.history().capture() == start);
    CHECK(p.activeSlot() == CompareSlot::a);

    // Applying an echo estimate ("Apply echo fix") is a step too.
    const auto beforeEcho = p.history().capture();
    dsp::EchoEstimate estimate;
    estimate.reflections.push_back({});
    estimate.reflections.back().delayMs = 6.0;
    estimate.reflections.back().gain = 0.35;
    p.applyEchoEstimate(estimate);
    CHECK(valueOf(p, ids::echoOn) == 1.0f);
    CHECK(p.history().undoName() == "Apply echo fix");
    CHECK(p.undo());
    CHECK(p.history().capture() == beforeEcho);

    // A new edit after undoing drops the steps that could have been redone.
    CHECK(p.redo());
    edit(p, ids::slotQ(1), 3.0f);
    CHECK_FALSE(p.history().canRedo());

    // A host restoring a session starts a fresh history (with the slots it saved).
    juce::MemoryBlock saved;
    p.getStateInformation(saved);
    p.setStateInformation(saved.getData(), static_cast<int>(saved.getSize()));
    CHECK_FALSE(p.history().canUndo());
    CHECK_FALSE(p.history().canRedo());
}

TEST_CASE("A/B: store and recall keep and bring back the whole state", "[plugin][undo]")
{
    // Common practice for comparison slots: recalling a slot restores every parameter to the
    // value stored, output gain and protection included; a reopened session still has both.
    JuceGuard guard;
    KerfProcessor p;
    CHECK_FALSE(p.recallSlot(CompareSlot::b)); // empty
    REQUIRE(p.importChain(parse(kChainA)).isEmpty());
    edit(p, ids::outputGain, -3.5f);
    p.storeSlot(CompareSlot::a);
    const auto a = p.history().capture();
    REQUIRE(p.importChain(parse(kChainB)).isEmpty());
    edit(p, ids::protectCeiling, -6.0f);
    p.storeSlot(CompareSlot::b);
    const auto b = p.history().capture();
    CHECK(p.recallSlot(CompareSlot::a));
    CHECK(p.activeSlot() == CompareSlot::a);
    CHECK(p.history().capture() == a);
    CHECK(sameChain(p.exportChain(), parse(kChainA)));
    CHECK(valueOf(p, ids::outputGain) == -3.5f);
    CHECK(p.recallSlot(CompareSlot::b));
    CHECK(p.history().capture() == b);
    CHECK(valueOf(p, ids::protectCeiling) == -6.0f);
    CHECK(p.undo()); // the recall is a step
    CHECK(p.history().capture() == a);
    CHECK(p.activeSlot() == CompareSlot::a);

    // Both slots and the active one are saved with the session and come back with it.
    juce::MemoryBlock saved;
    p.getStateInformation(saved);
    KerfProcessor q;
    q.setStateInformation(saved.getData(), static_cast<int>(saved.getSize()));
    CHECK(q.lastStateProblem().isEmpty());
    CHECK(q.history().capture() == a);
    CHECK(q.activeSlot() == CompareSlot::a);
    REQUIRE(q.slotHolds(CompareSlot::b));
    q.switchSlot();
    CHECK(q.history().capture() == b);
    // A state saved before any slot was used (or by an older Kerf) restores no slots.
    KerfProcessor fresh;
    juce::MemoryBlock plain;
    fresh.getStateInformation(plain);
    q.setStateInformation(plain.getData(), static_cast<int>(plain.getSize()));
    CHECK_FALSE(q.slotHolds(CompareSlot::a));
    CHECK_FALSE(q.slotHolds(CompareSlot::b));
    CHECK(q.activeSlot() == CompareSlot::a);
}

TEST_CASE("A/B: switching while audio runs is click-free", "[plugin][undo][smoothing]")
{
    // Issue bar for changes while audio runs (as Tests/Dsp/SmoothingTests.cpp measures it):
    // a 100 Hz sine at -6 dBFS; at most -80 dBFS above 1 kHz in every 10 ms window across the
    // switches. Comparator: the outputs of two processors that each hold one slot, spliced at
    // the same samples (instant switching), must measure at least 30 dB worse.
    JuceGuard guard;
    const double fs = 48000.0;
    const int block = 480;
    const auto tone = kerf::test::testTone(fs, 4.0);
    const int n = static_cast<int>(tone.size());

    auto setUp = [&](KerfProcessor& p, const char* chain)
    {
        REQUIRE(p.importChain(parse(chain)).isEmpty());
        // The output ceiling is a non-linear stage of its own: off here (the levels stay
        // below it anyway), so that only the switch is measured.
        edit(p, ids::protectOn, 0.0f);
        p.setPlayConfigDetails(1, 1, fs, block);
        p.prepareToPlay(fs, block);
    };
    KerfProcessor ab, onlyA, onlyB;
    setUp(ab, kChainA);
    ab.switchSlot(); // B = a copy of A, now edited into chain B
    REQUIRE(ab.importChain(parse(kChainB)).isEmpty());
    ab.switchSlot(); // back to A
    REQUIRE(ab.activeSlot() == CompareSlot::a);
    setUp(onlyA, kChainA);
    setUp(onlyB, kChainB);

    const int switchAt[] = {static_cast<int>(1.5 * fs), static_cast<int>(2.5 * fs)};
    std::vector<double> got, a, b;
    juce::AudioBuffer<float> buf(1, block);
    juce::MidiBuffer midi;
    auto run = [&](KerfProcessor& p, int start, std::vector<double>& out)
    {
        for (int i = 0; i < block; ++i)
            buf.setSample(0, i, static_cast<float>(tone[static_cast<std::size_t>(start + i)]));
        p.processBlock(buf, midi);
        for (int i = 0; i < block; ++i)
            out.push_back(buf.getSample(0, i));
    };
    for (int start = 0; start + block <= n; start += block)
    {
        if (start == switchAt[0] || start == switchAt[1])
            ab.switchSlot();
        run(ab, start, got);
        run(onlyA, start, a);
        run(onlyB, start, b);
    }
    std::vector<double> spliced(got.size());
    for (std::size_t i = 0; i < got.size(); ++i)
    {
        const bool inB = static_cast<int>(i) >= switchAt[0] && static_cast<int>(i) < switchAt[1];
        spliced[i] = inB ? b[i] : a[i];
    }
    const double kerfDb = kerf::test::worstSplatterDbfs(got, fs, 0.25);
    const double instantDb = kerf::test::worstSplatterDbfs(spliced, fs, 0.25);
    WARN("splatter, A/B switches: Kerf " << kerfDb << " dBFS, instant " << instantDb << " dBFS");
    CHECK(kerfDb <= -80.0);
    CHECK(instantDb >= kerfDb + 30.0);
    // The switch did take effect: 0.4 s after each switch the output is the other slot's
    // (the glide and crossfade are over; memories of both chains have long decayed at
    // 100 Hz: the slowest stage, the 6 ms echo inverse at gain 0.3, falls 60 dB in 35 ms).
    double errB = 0.0, errA = 0.0;
    for (int i = switchAt[0] + static_cast<int>(0.4 * fs); i < switchAt[1]; ++i)
        errB = std::max(
            errB, std::abs(got[static_cast<std::size_t>(i)] - b[static_cast<std::size_t>(i)]));
    for (int i = switchAt[1] + static_cast<int>(0.4 * fs); i < static_cast<int>(got.size()); ++i)
        errA = std::max(
            errA, std::abs(got[static_cast<std::size_t>(i)] - a[static_cast<std::size_t>(i)]));
    INFO("max difference from slot B's output " << errB << ", from slot A's " << errA);
    CHECK(errB < 1e-6);
    CHECK(errA < 1e-6);
}

TEST_CASE("all flat: every stage off at once, settings kept, one undo step", "[plugin][undo]")
{
    // Live use (README.md, "In the plugin and the standalone app"): one control takes every
    // stage out, the signal passes unchanged once the crossfade is over, output gain and the
    // protection stay as they were, and undo brings the stages back.
    JuceGuard guard;
    KerfProcessor p;
    REQUIRE(p.importChain(parse(kChainB)).isEmpty());
    edit(p, ids::outputGain, 0.0f);
    const auto before = p.history().capture();
    const auto chainBefore = p.exportChain();
    CHECK_FALSE(p.isAllFlat());

    const double fs = 48000.0;
    const int block = 256;
    p.setPlayConfigDetails(2, 2, fs, block);
    p.prepareToPlay(fs, block);
    p.setAllFlat();
    CHECK(p.isAllFlat());
    CHECK(p.exportChain().numStages == 0);
    CHECK(p.history().undoName() == "All flat");
    CHECK(valueOf(p, ids::protectOn) == 1.0f);

    // After the crossfade (default glide 20 ms; 0.5 s here) the output equals the input.
    juce::AudioBuffer<float> buf(2, block), in(2, block);
    juce::MidiBuffer midi;
    std::mt19937 rng(77u);
    std::uniform_real_distribution<float> u(-0.2f, 0.2f);
    double diffLate = 0.0;
    for (int k = 0; k < static_cast<int>(fs) / block; ++k)
    {
        for (int ch = 0; ch < 2; ++ch)
            for (int i = 0; i < block; ++i)
                in.setSample(ch, i, u(rng));
        buf.makeCopyOf(in);
        p.processBlock(buf, midi);
        if (k * block > fs / 2)
            for (int ch = 0; ch < 2; ++ch)
                for (int i = 0; i < block; ++i)
                    diffLate = std::max(
                        diffLate, std::abs(double(buf.getSample(ch, i)) - in.getSample(ch, i)));
    }
    CHECK(diffLate == 0.0);

    // Undo: every stage back with its settings; redo: flat again.
    CHECK(p.undo());
    CHECK(p.history().capture() == before);
    CHECK(sameChain(p.exportChain(), chainBefore));
    CHECK(p.redo());
    CHECK(p.isAllFlat());
}

TEST_CASE("factory presets: a library for all three users that the plugin holds exactly",
          "[plugin][presets]")
{
    // Issue scope: at least 15 factory presets spanning mixing, live and spoken word (file
    // names start with mix-, live-, spoken-word-; DEVELOPERS.md), each an invented scenario
    // described in the file, each loadable as a program. Common practice: the plugin holds a
    // preset as the file says (values on the parameter grids), so the program sounds like
    // `kerf render` of the file (the host tests compare the audio).
    JuceGuard guard;
    auto files = juce::File(KERF_SOURCE_DIR)
                     .getChildFile("Presets")
                     .findChildFiles(juce::File::findFiles, false, "*.json");
    files.sort();
    CHECK(files.size() >= 15);
    int mix = 0, live = 0, spoken = 0;
    juce::StringArray names;
    for (const auto& f : files)
    {
        INFO(f.getFileName());
        const auto name = f.getFileName();
        mix += name.startsWith("mix-") ? 1 : 0;
        live += name.startsWith("live-") ? 1 : 0;
        spoken += name.startsWith("spoken-word-") ? 1 : 0;
        const auto json = juce::JSON::parse(f);
        CHECK(json.getProperty("description", {}).toString().length() > 40);
        const auto r = readChainFile(f);
        REQUIRE(r.ok);
        CHECK_FALSE(names.contains(r.name));
        names.add(r.name);

        KerfProcessor p;
        CHECK(p.importChain(r.chain).isEmpty());
        // Same impulse response through the parameters (the plugin orders echo, sections,
        // combs; the stages are linear and time-invariant, so the order does not matter).
        const auto want = dsp::impulseResponse(r.chain, 48000.0, 4096);
        const auto got = dsp::impulseResponse(p.exportChain(), 48000.0, 4096);
        double worst = 0.0;
        for (std::size_t i = 0; i < want.size(); ++i)
            worst = std::max(worst, std::abs(want[i] - got[i]));
        INFO("max impulse-response difference " << worst);
        // Float parameters round the file's values by up to 6e-8 relative (IEEE 754 single);
        // a value off the parameter grid (5 significant digits for frequencies and delays,
        // 4 for Q, 0.01 dB, 1e-4 for comb and echo gains) moves by up to half a grid step,
        // hundreds of times more.
        CHECK(worst < 2e-6);
    }
    CHECK(mix >= 4);
    CHECK(live >= 4);
    CHECK(spoken >= 4);
    CHECK(mix + live + spoken == files.size());
}

TEST_CASE("bypass: the host's switch crossfades, never clicks", "[plugin][smoothing]")
{
    // Issue bar for changes while audio runs (Tests/Dsp/SmoothingTests.cpp): a 100 Hz sine at
    // -6 dBFS through a chain that changes it a lot (a 9 dB lift on the tone, a deep cut
    // and a comb), bypassed at 1.5 s and back at 2.5 s: at most -80 dBFS above 1 kHz in every
    // 10 ms window; an instant switch (the processed and the input spliced) measures at
    // least 30 dB worse. Once faded, the output is exactly the input, and after coming back
    // exactly what a never-bypassed processor gives (the chain ran all along).
    JuceGuard guard;
    const double fs = 48000.0;
    const int block = 512;
    const auto tone = kerf::test::testTone(fs, 4.0);
    const char* const chain = R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "peaking", "freq_hz": 100, "gain_db": 9, "q": 2},
      {"type": "notch", "freq_hz": 300, "q": 1},
      {"type": "comb", "delay_ms": 3, "gain": 0.4, "mix": 0.5}]})";
    KerfProcessor bypassed, plain;
    for (auto* p : {&bypassed, &plain})
    {
        REQUIRE(p->importChain(parse(chain)).isEmpty());
        edit(*p, ids::protectOn, 0.0f); // the ceiling is non-linear: off, levels stay below it
        p->setPlayConfigDetails(1, 1, fs, block);
        p->prepareToPlay(fs, block);
    }
    REQUIRE(bypassed.getBypassParameter() != nullptr);
    CHECK(bypassed.getBypassParameter() == bypassed.state().getParameter(ids::bypass));
    const int on = static_cast<int>(1.5 * fs) / block * block;
    const int off = static_cast<int>(2.5 * fs) / block * block;
    std::vector<double> got, processed;
    juce::AudioBuffer<float> buf(1, block);
    juce::MidiBuffer midi;
    const int n = static_cast<int>(tone.size()) / block * block;
    for (int start = 0; start < n; start += block)
    {
        if (start == on || start == off)
            bypassed.getBypassParameter()->setValueNotifyingHost(start == on ? 1.0f : 0.0f);
        for (auto* p : {&bypassed, &plain})
        {
            for (int i = 0; i < block; ++i)
                buf.setSample(0, i, static_cast<float>(tone[static_cast<std::size_t>(start + i)]));
            p->processBlock(buf, midi);
            for (int i = 0; i < block; ++i)
                (p == &plain ? processed : got).push_back(buf.getSample(0, i));
        }
    }
    std::vector<double> spliced(got.size()), input(got.size());
    for (std::size_t i = 0; i < got.size(); ++i)
    {
        input[i] = static_cast<float>(tone[i]);
        spliced[i] =
            static_cast<int>(i) >= on && static_cast<int>(i) < off ? input[i] : processed[i];
    }
    const double kerfDb = kerf::test::worstSplatterDbfs(got, fs, 0.25);
    const double instantDb = kerf::test::worstSplatterDbfs(spliced, fs, 0.25);
    WARN("splatter, bypass in and out: Kerf " << kerfDb << " dBFS, instant " << instantDb
                                              << " dBFS");
    CHECK(kerfDb <= -80.0);
    CHECK(instantDb >= kerfDb + 30.0);
    // Faded (the default glide, 20 ms, is over after 0.1 s): exactly the input, then exactly
    // the processed signal.
    const int settle = static_cast<int>(0.1 * fs);
    bool exactInput = true, exactProcessed = true;
    for (int i = on + settle; i < off; ++i)
        exactInput =
            exactInput && got[static_cast<std::size_t>(i)] == input[static_cast<std::size_t>(i)];
    for (int i = off + settle; i < n; ++i)
        exactProcessed = exactProcessed &&
                         got[static_cast<std::size_t>(i)] == processed[static_cast<std::size_t>(i)];
    CHECK(exactInput);
    CHECK(exactProcessed);
    // The chain does change the tone (so the bypass is audible): 9 dB at 100 Hz; measured
    // as RMS over the 0.1 s before the bypass returns.
    double rmsProcessed = 0.0, rmsInput = 0.0;
    for (int i = off - settle; i < off; ++i)
    {
        rmsProcessed +=
            processed[static_cast<std::size_t>(i)] * processed[static_cast<std::size_t>(i)];
        rmsInput += input[static_cast<std::size_t>(i)] * input[static_cast<std::size_t>(i)];
    }
    CHECK(rmsProcessed > 2.0 * rmsInput);
    // Bypass is the host's: not an undo step, not stored by A/B.
    CHECK_FALSE(bypassed.history().undoName().contains("Bypass"));
}

TEST_CASE("parameters: read where they change, the same output for any host block size",
          "[plugin][smoothing]")
{
    // The plugin looks at its parameters every 32 samples of a host block (issue: updates
    // every <= 32 samples where the host gives no sample offsets) and reads the chain only
    // where a value changed, running the samples in between as one piece. Checked against
    // the plain way, done here by hand: a chain processor that is handed the parameters'
    // chain (ParameterRefs::readChain) at every 32-sample point and runs 32 samples at a
    // time. Automation (random section, comb and echo settings, types, switches and the
    // glide time, invented) lands between host blocks every 480 samples; the plugin's output
    // must be the same to the last bit for host blocks of 480, 96 and 32 samples and equal
    // to the by-hand processing. (Common practice: a plugin's output does not depend on
    // the host's block size.)
    JuceGuard guard;
    const double fs = 48000.0;
    const int span = 480, spans = 120; // 1.2 s
    const int n = span * spans;
    std::mt19937 rng(9090u);
    std::uniform_real_distribution<float> u(0.0f, 1.0f);
    std::vector<float> input(static_cast<std::size_t>(2 * n));
    for (auto& x : input)
        x = 0.25f * (u(rng) - 0.5f);
    // What moves at each span: parameter ID and normalised value, one to six of them.
    KerfProcessor probe;
    const auto params = probe.getParameters();
    std::vector<juce::String> movable;
    for (auto* param : params)
        if (auto* ranged = dynamic_cast<juce::RangedAudioParameter*>(param))
            if (ranged->paramID != ids::protectOn && ranged->paramID != ids::outputGain &&
                ranged->paramID != ids::bypass)
                movable.push_back(ranged->paramID);
    std::vector<std::vector<std::pair<juce::String, float>>> moves(spans);
    for (int k = 1; k < spans; ++k)
        for (int m = 0, count = 1 + static_cast<int>(u(rng) * 6.0f); m < count; ++m)
            moves[static_cast<std::size_t>(k)].emplace_back(
                movable[static_cast<std::size_t>(u(rng) * static_cast<float>(movable.size() - 1))],
                u(rng));
    const char* const start = R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "peaking", "freq_hz": 400, "gain_db": 6, "q": 2},
      {"type": "low_shelf", "freq_hz": 120, "gain_db": -4},
      {"type": "high_pass", "freq_hz": 50, "order": 4},
      {"type": "comb", "delay_ms": 4, "gain": 0.4, "mix": 0.5},
      {"type": "echo_cancel", "reflections": [{"delay_ms": 5, "gain": 0.3}]}]})";
    auto setUp = [&](KerfProcessor& p, int block)
    {
        REQUIRE(p.importChain(parse(start)).isEmpty());
        edit(p, ids::protectOn, 0.0f); // the ceiling is non-linear: off, for a plain comparison
        p.setPlayConfigDetails(2, 2, fs, block);
        p.prepareToPlay(fs, block);
    };
    auto apply = [&](KerfProcessor& p, int k)
    {
        for (const auto& [id, value] : moves[static_cast<std::size_t>(k)])
            p.state().getParameter(id)->setValueNotifyingHost(value);
    };
    auto runPlugin = [&](int block)
    {
        KerfProcessor p;
        setUp(p, block);
        std::vector<float> out(input.size());
        juce::AudioBuffer<float> buf(2, block);
        juce::MidiBuffer midi;
        for (int at = 0; at < n; at += block)
        {
            if (at % span == 0)
                apply(p, at / span);
            for (int ch = 0; ch < 2; ++ch)
                for (int i = 0; i < block; ++i)
                    buf.setSample(ch, i, input[static_cast<std::size_t>(ch * n + at + i)]);
            p.processBlock(buf, midi);
            for (int ch = 0; ch < 2; ++ch)
                for (int i = 0; i < block; ++i)
                    out[static_cast<std::size_t>(ch * n + at + i)] = buf.getSample(ch, i);
        }
        return out;
    };
    const auto whole = runPlugin(span), middle = runPlugin(96), small = runPlugin(32);
    // By hand: the parameters' chain handed over at every 32-sample point, 32 samples a run.
    KerfProcessor host;
    setUp(host, span);
    ParameterRefs refs(host.state());
    dsp::ChainProcessor chain;
    chain.prepare(fs, span, 2);
    dsp::ChainSpec spec;
    std::vector<float> byHand(input);
    for (int at = 0; at < n; at += dsp::kUpdateIntervalSamples)
    {
        if (at % span == 0)
            apply(host, at / span);
        chain.setGlideMs(static_cast<double>(refs.glideMs->load()));
        refs.readChain(spec);
        chain.setChain(spec);
        float* piece[2] = {byHand.data() + at, byHand.data() + n + at};
        chain.process(piece, 2, dsp::kUpdateIntervalSamples);
    }
    int moved = 0;
    for (const auto& m : moves)
        moved += static_cast<int>(m.size());
    INFO("parameter changes: " << moved);
    CHECK(whole == small);
    CHECK(middle == small);
    CHECK(small == byHand);
    // The automation did change the sound (the comparison is not between silent outputs).
    double diff = 0.0;
    for (std::size_t i = 0; i < input.size(); ++i)
        diff = std::max(diff, std::abs(static_cast<double>(small[i]) - input[i]));
    CHECK(diff > 0.01);
}

TEST_CASE("editor: undo, redo, A/B and all flat are buttons that reach the processor",
          "[plugin][undo]")
{
    // Common practice for controls: a click on the button does what the processor function
    // does. Clicks are delivered through JUCE's message loop, as a mouse click would be.
    JuceGuard guard;
    KerfProcessor p;
    REQUIRE(p.importChain(parse(kChainB)).isEmpty());
    std::unique_ptr<juce::AudioProcessorEditor> editor(p.createEditor());
    REQUIRE(editor != nullptr);
    auto button = [&editor](const char* id)
    {
        auto* b = dynamic_cast<juce::Button*>(findDeep(*editor, id)); // in the preset bar
        REQUIRE(b != nullptr);
        return b;
    };
    auto click = [](juce::Button* b)
    {
        // The editor enables undo and redo from its timer (30 Hz): wait for it first.
        for (int i = 0; i < 200 && !b->isEnabled(); ++i)
            juce::MessageManager::getInstance()->runDispatchLoopUntil(10);
        REQUIRE(b->isEnabled());
        b->triggerClick();
        juce::MessageManager::getInstance()->runDispatchLoopUntil(20);
    };
    const auto before = p.history().capture();
    click(button("allFlat"));
    CHECK(p.isAllFlat());
    click(button("undo"));
    CHECK(p.history().capture() == before);
    click(button("redo"));
    CHECK(p.isAllFlat());
    click(button("compare"));
    CHECK(p.activeSlot() == CompareSlot::b);
    for (int i = 0; i < 200 && button("compare")->getButtonText() != "A/B: B"; ++i)
        juce::MessageManager::getInstance()->runDispatchLoopUntil(10); // the editor's timer
    CHECK(button("compare")->getButtonText() == "A/B: B");
    CHECK(button("undo")->isEnabled());
}

TEST_CASE("state restores, A/B switches and undo while audio runs on its own thread",
          "[plugin][undo]")
{
    // Issue requirement: restoring state while audio runs is safe. The audio thread reads
    // only atomics, so a restore, an A/B switch or an undo on the message thread can never
    // leave it half-updated: here an audio thread processes blocks without pause while the
    // message thread restores saved states, switches slots, undoes and redoes; every output
    // sample stays finite and under the output ceiling (on, -1 dBFS), and the audio thread
    // keeps going (blocks are counted).
    JuceGuard guard;
    KerfProcessor p;
    const double fs = 48000.0;
    const int block = 256;
    p.setPlayConfigDetails(2, 2, fs, block);
    p.prepareToPlay(fs, block);
    p.setCurrentProgram(2);
    juce::MemoryBlock stateA, stateB;
    p.getStateInformation(stateA);
    p.setCurrentProgram(p.getNumPrograms() - 1);
    p.getStateInformation(stateB);

    std::atomic<bool> stop{false}, bad{false};
    std::atomic<int> blocks{0};
    std::thread audio(
        [&]
        {
            juce::AudioBuffer<float> buf(2, block);
            juce::MidiBuffer midi;
            std::mt19937 rng(99u);
            std::uniform_real_distribution<float> u(-0.5f, 0.5f);
            const float ceiling = juce::Decibels::decibelsToGain(-1.0f) + 1e-6f;
            while (!stop.load())
            {
                for (int ch = 0; ch < 2; ++ch)
                    for (int i = 0; i < block; ++i)
                        buf.setSample(ch, i, u(rng));
                p.processBlock(buf, midi);
                for (int ch = 0; ch < 2; ++ch)
                    for (int i = 0; i < block; ++i)
                        if (!std::isfinite(buf.getSample(ch, i)) ||
                            std::abs(buf.getSample(ch, i)) > ceiling)
                            bad = true;
                ++blocks;
            }
        });
    for (int k = 0; k < 300; ++k)
    {
        switch (k % 5)
        {
        case 0:
            p.setStateInformation(
                (k / 5) % 2 ? stateA.getData() : stateB.getData(),
                static_cast<int>((k / 5) % 2 ? stateA.getSize() : stateB.getSize()));
            break;
        case 1:
            p.switchSlot();
            break;
        case 2:
            edit(p, ids::slotGain(k % 24), static_cast<float>(k % 13) - 6.0f);
            break;
        case 3:
            p.undo();
            break;
        default:
            p.redo();
            break;
        }
        juce::Thread::sleep(1);
    }
    stop = true;
    audio.join();
    INFO("blocks processed meanwhile: " << blocks.load());
    CHECK(blocks.load() > 100);
    CHECK_FALSE(bad.load());
}
