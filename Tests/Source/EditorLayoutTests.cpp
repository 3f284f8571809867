// The editor as a window: its size and analyzer switch kept in the session, its layout under a
// host's scale factor, and an accessibility and tooltip audit of every control it shows.
#include "ChainFile.h"
#include "KerfEditor.h"
#include "PluginProcessor.h"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <cstdio>
#include <functional>
#include <numbers>
#include <typeinfo>

using namespace kerf;

namespace
{
struct JuceGuard
{
    juce::ScopedJuceInitialiser_GUI init;
};

KerfEditor& kerfEditor(juce::AudioProcessorEditor& e)
{
    auto* k = dynamic_cast<KerfEditor*>(&e);
    REQUIRE(k != nullptr);
    return *k;
}

juce::MemoryBlock saveState(KerfProcessor& p)
{
    juce::MemoryBlock m;
    p.getStateInformation(m);
    return m;
}

void restoreState(KerfProcessor& p, const juce::MemoryBlock& m)
{
    p.setStateInformation(m.getData(), static_cast<int>(m.getSize()));
}

/// The same state without its editor element, as Kerf wrote it before the editor kept one.
juce::MemoryBlock withoutEditorElement(const juce::MemoryBlock& m)
{
    auto xml = juce::AudioProcessor::getXmlFromBinary(m.getData(), static_cast<int>(m.getSize()));
    REQUIRE(xml != nullptr);
    auto* e = xml->getChildByName("EditorView");
    REQUIRE(e != nullptr);
    xml->removeChildElement(e, true);
    juce::MemoryBlock older;
    juce::AudioProcessor::copyXmlToBinary(*xml, older);
    return older;
}

// ---- Accessibility handlers offscreen --------------------------------------------------
// Component::getAccessibilityHandler() answers nullptr without a native window, and the
// factory it calls (createAccessibilityHandler) is private. An explicit instantiation may name
// a private member ([temp.explicit]: access checking does not apply there), which hands the
// test a pointer to that virtual function: calling it builds exactly the handler a screen
// reader would get for the component.
using HandlerFactory = std::unique_ptr<juce::AccessibilityHandler> (juce::Component::*)();
HandlerFactory handlerFactory();
template <HandlerFactory F> struct HandlerFactoryAccess
{
    friend HandlerFactory handlerFactory() { return F; }
};
template struct HandlerFactoryAccess<&juce::Component::createAccessibilityHandler>;

std::unique_ptr<juce::AccessibilityHandler> accessibilityOf(juce::Component& c)
{
    return (c.*handlerFactory())();
}

/// What the audit treats as a control a user operates: JUCE's controls, anything that takes
/// keyboard focus, and the editor's own views (mouse and keyboard surfaces).
bool isControl(juce::Component& c)
{
    if (auto* label = dynamic_cast<juce::Label*>(&c))
        return label->isEditable();
    return dynamic_cast<juce::Button*>(&c) != nullptr ||
           dynamic_cast<juce::Slider*>(&c) != nullptr ||
           dynamic_cast<juce::ComboBox*>(&c) != nullptr ||
           dynamic_cast<juce::TextEditor*>(&c) != nullptr ||
           dynamic_cast<juce::ScrollBar*>(&c) != nullptr ||
           dynamic_cast<juce::ResizableCornerComponent*>(&c) != nullptr ||
           dynamic_cast<juce::ResizableBorderComponent*>(&c) != nullptr ||
           dynamic_cast<juce::ListBox*>(&c) != nullptr ||
           dynamic_cast<juce::TreeView*>(&c) != nullptr ||
           dynamic_cast<ResponseView*>(&c) != nullptr ||
           dynamic_cast<PoleZeroView*>(&c) != nullptr ||
           dynamic_cast<ImpulseView*>(&c) != nullptr ||
           dynamic_cast<SectionHandles*>(&c) != nullptr || c.getWantsKeyboardFocus();
}

/// Controls whose children are their own parts (a slider's value box, a combo box's label).
bool isCompound(juce::Component& c)
{
    return dynamic_cast<juce::Slider*>(&c) != nullptr ||
           dynamic_cast<juce::ComboBox*>(&c) != nullptr ||
           dynamic_cast<juce::TextEditor*>(&c) != nullptr ||
           dynamic_cast<juce::ScrollBar*>(&c) != nullptr ||
           dynamic_cast<juce::Button*>(&c) != nullptr || dynamic_cast<juce::Label*>(&c) != nullptr;
}

/// Controls that should take keyboard focus (Tab reaches them; Space, Return or the arrow
/// keys operate them).
bool needsFocus(juce::Component& c)
{
    return dynamic_cast<juce::Button*>(&c) != nullptr ||
           dynamic_cast<juce::Slider*>(&c) != nullptr ||
           dynamic_cast<juce::ComboBox*>(&c) != nullptr ||
           dynamic_cast<juce::TextEditor*>(&c) != nullptr ||
           dynamic_cast<SectionHandles*>(&c) != nullptr;
}

struct Audit
{
    int controls = 0;
    std::vector<juce::String> problems;
};

juce::String nameOf(juce::Component& c)
{
    if (c.getComponentID().isNotEmpty())
        return c.getComponentID();
    if (c.getTitle().isNotEmpty())
        return "'" + c.getTitle() + "'";
    if (auto* b = dynamic_cast<juce::Button*>(&c); b != nullptr && b->getButtonText().isNotEmpty())
        return "'" + b->getButtonText() + "'";
    return typeid(c).name();
}

/// Common practice (JUCE's accessibility guide; WCAG 2.1 4.1.2 "Name, Role, Value"): every
/// control a user operates has a name and a role; here also a one-line tooltip.
void audit(juce::Component& parent, const juce::String& path, Audit& out)
{
    for (auto* c : parent.getChildren())
    {
        if (!c->isVisible())
            continue;
        const auto where = path + "/" + nameOf(*c);
        if (isControl(*c))
        {
            ++out.controls;
            auto problem = [&](const juce::String& what)
            { out.problems.push_back(where + ": " + what); };
            auto handler = accessibilityOf(*c);
            if (!c->isAccessible() || handler == nullptr)
                problem("not accessible");
            else
            {
                const auto role = handler->getRole();
                if (role == juce::AccessibilityRole::unspecified ||
                    role == juce::AccessibilityRole::ignored)
                    problem("accessibility role unspecified or ignored");
                // A combo box's handler answers its current text as title: the name must be
                // the component's own title.
                const auto title = dynamic_cast<juce::ComboBox*>(c) != nullptr
                                       ? c->getTitle()
                                       : handler->getTitle();
                if (title.trim().isEmpty())
                    problem("no accessibility title");
            }
            auto* tip = dynamic_cast<juce::TooltipClient*>(c);
            const auto text = tip != nullptr ? tip->getTooltip() : juce::String();
            if (text.trim().isEmpty())
                problem("no tooltip");
            else if (text.containsAnyOf("\r\n"))
                problem("tooltip longer than one line");
            // (JUCE answers false for a disabled component, which Tab skips anyway.)
            if (needsFocus(*c) && c->isEnabled() && !c->getWantsKeyboardFocus())
                problem("takes no keyboard focus");
            if (isCompound(*c))
                continue;
        }
        audit(*c, where, out);
    }
}

Audit auditEditor(juce::Component& editor)
{
    Audit a;
    audit(editor, "editor", a);
    return a;
}

/// Every visible component lies inside its parent (a viewport's content is larger on purpose:
/// only the viewport itself is checked).
void checkInside(juce::Component& parent, const juce::String& path,
                 std::vector<juce::String>& outside, int& count)
{
    for (auto* c : parent.getChildren())
    {
        if (!c->isVisible())
            continue;
        ++count;
        const auto where = path + "/" + nameOf(*c);
        if (!parent.getLocalBounds().contains(c->getBounds()))
            outside.push_back(where + " " + c->getBounds().toString() + " in " +
                              parent.getLocalBounds().toString());
        if (dynamic_cast<juce::Viewport*>(&parent) == nullptr)
            checkInside(*c, where, outside, count);
    }
}

dsp::ChainSpec parse(const char* text)
{
    const auto r = parseChainJson(text);
    REQUIRE(r.ok);
    return r.chain;
}

/// Source: R. Bristow-Johnson, Audio EQ Cookbook, peakingEQ (the chain below uses the
/// "bilinear" design, documented to be these formulas). |H| in dB at f for fs = 48 kHz.
double cookbookPeakingDb(double f, double f0, double gainDb, double q)
{
    const double fs = 48000.0, pi = std::numbers::pi;
    const double a = std::pow(10.0, gainDb / 40.0), w0 = 2.0 * pi * f0 / fs;
    const double alpha = std::sin(w0) / (2.0 * q), c = std::cos(w0);
    const std::complex<double> z1 = std::polar(1.0, -2.0 * pi * f / fs);
    const auto h = (1.0 + alpha * a - 2.0 * c * z1 + (1.0 - alpha * a) * z1 * z1) /
                   (1.0 + alpha / a - 2.0 * c * z1 + (1.0 - alpha / a) * z1 * z1);
    return 20.0 * std::log10(std::abs(h));
}

/// Distance in unscaled pixels from the expected row of `db` at `freqHz` to the run of
/// curve-coloured pixels in a snapshot rendered at `scale`.
double curveErrorPx(const juce::Image& image, double scale, const juce::Component& editor,
                    const ResponseView& view, double freqHz, double db)
{
    const int column = static_cast<int>(std::floor(view.xForFrequency(freqHz)));
    const auto plot = view.plotArea();
    // The device pixel at the logical column's centre lies wholly inside the column.
    const auto origin = editor.getLocalPoint(&view, juce::Point<int>(column, plot.getY()));
    const int x = static_cast<int>(std::floor((origin.x + 0.5) * scale));
    const int yTop = static_cast<int>(std::floor(origin.y * scale));
    const int yEnd = static_cast<int>(std::ceil((origin.y + plot.getHeight()) * scale));
    int first = -1, last = -1;
    for (int y = yTop; y < yEnd && y < image.getHeight(); ++y)
        if (image.getPixelAt(x, y).getARGB() == ResponseView::curveColour().getARGB())
        {
            if (first < 0)
                first = y;
            last = y;
        }
    REQUIRE(first >= 0);
    // Back in the view's rows: the view draws rows round(y) - 1 .. round(y) for a line.
    const double offset = origin.y - plot.getY();
    const double drawnTop = first / scale - offset + 1.0;
    const double drawnBottom = (last + 1) / scale - offset - 1.0;
    const double expected = view.yForDb(db);
    return expected < drawnTop      ? drawnTop - expected
           : expected > drawnBottom ? expected - drawnBottom
                                    : 0.0;
}
} // namespace

TEST_CASE("editor: a resized editor reopens at its size from the saved state", "[editor][layout]")
{
    // Common practice: a session reopens the plugin window at the size it was left at.
    JuceGuard guard;
    juce::MemoryBlock saved;
    {
        KerfProcessor a;
        CHECK(a.editorSettings().width == 0); // never opened: no size yet
        std::unique_ptr<juce::AudioProcessorEditor> editor(a.createEditor());
        CHECK(editor->getWidth() == KerfEditor::kDefaultWidth);
        CHECK(editor->getHeight() == KerfEditor::kDefaultHeight);
        CHECK(editor->isResizable());
        editor->setSize(1111, 777);
        editor.reset();
        saved = saveState(a);
    }
    KerfProcessor b;
    restoreState(b, saved);
    CHECK(b.lastStateProblem().isEmpty());
    {
        std::unique_ptr<juce::AudioProcessorEditor> editor(b.createEditor());
        CHECK(editor->getWidth() == 1111);
        CHECK(editor->getHeight() == 777);
    }

    // The limits hold for a drag (the constrainer) and for a state that asks too much.
    {
        std::unique_ptr<juce::AudioProcessorEditor> editor(b.createEditor());
        editor->setBoundsConstrained({0, 0, 100, 100});
        CHECK(editor->getWidth() == KerfEditor::kMinWidth);
        CHECK(editor->getHeight() == KerfEditor::kMinHeight);
        editor->setBoundsConstrained({0, 0, 9000, 9000});
        CHECK(editor->getWidth() == KerfEditor::kMaxWidth);
        CHECK(editor->getHeight() == KerfEditor::kMaxHeight);
    }
    auto xml =
        juce::AudioProcessor::getXmlFromBinary(saved.getData(), static_cast<int>(saved.getSize()));
    REQUIRE(xml != nullptr);
    xml->getChildByName("EditorView")->setAttribute("width", 9000);
    xml->getChildByName("EditorView")->setAttribute("height", 3);
    juce::MemoryBlock huge;
    juce::AudioProcessor::copyXmlToBinary(*xml, huge);
    KerfProcessor c;
    restoreState(c, huge);
    {
        std::unique_ptr<juce::AudioProcessorEditor> editor(c.createEditor());
        CHECK(editor->getWidth() == KerfEditor::kMaxWidth);
        CHECK(editor->getHeight() == KerfEditor::kMinHeight);
    }

    // A state from before the editor kept its size opens at the default size.
    KerfProcessor d;
    restoreState(d, withoutEditorElement(saved));
    CHECK(d.lastStateProblem().isEmpty());
    {
        std::unique_ptr<juce::AudioProcessorEditor> editor(d.createEditor());
        CHECK(editor->getWidth() == KerfEditor::kDefaultWidth);
        CHECK(editor->getHeight() == KerfEditor::kDefaultHeight);
        // A state restored while the editor is open resizes it at the next timer tick.
        restoreState(d, saved);
        for (int i = 0; i < 50 && editor->getWidth() != 1111; ++i)
            juce::MessageManager::getInstance()->runDispatchLoopUntil(10);
        CHECK(editor->getWidth() == 1111);
        CHECK(editor->getHeight() == 777);
    }
}

TEST_CASE("editor: the analyzer switch is saved with the state and is off by default",
          "[editor][analyzer]")
{
    JuceGuard guard;
    KerfProcessor a;
    CHECK_FALSE(a.editorSettings().analyzerOn);
    juce::MemoryBlock off = saveState(a);
    {
        std::unique_ptr<juce::AudioProcessorEditor> editor(a.createEditor());
        CHECK_FALSE(kerfEditor(*editor).analyzerView().analyzerOn());
        kerfEditor(*editor).analyzerView().setAnalyzerOn(true, false);
    }
    // Closing the editor stops the analysis and its feed, but the switch stays on.
    CHECK_FALSE(a.analyzerFeedOn());
    CHECK(a.editorSettings().analyzerOn);
    const auto on = saveState(a);

    KerfProcessor b;
    restoreState(b, on);
    CHECK(b.editorSettings().analyzerOn);
    CHECK_FALSE(b.analyzerFeedOn()); // nothing runs until an editor shows it
    {
        std::unique_ptr<juce::AudioProcessorEditor> editor(b.createEditor());
        CHECK(kerfEditor(*editor).analyzerView().analyzerOn());
        CHECK(b.analyzerFeedOn());
        // Restoring a state saved with it off switches the open editor's analyzer off.
        restoreState(b, off);
        for (int i = 0; i < 50 && kerfEditor(*editor).analyzerView().analyzerOn(); ++i)
            juce::MessageManager::getInstance()->runDispatchLoopUntil(10);
        CHECK_FALSE(kerfEditor(*editor).analyzerView().analyzerOn());
        CHECK_FALSE(b.analyzerFeedOn());
    }
    // Older states and refused ones: off.
    KerfProcessor c;
    restoreState(c, on);
    restoreState(c, withoutEditorElement(on));
    CHECK_FALSE(c.editorSettings().analyzerOn);
    restoreState(c, on);
    const char junk[] = "not a state";
    c.setStateInformation(junk, sizeof(junk));
    CHECK_FALSE(c.editorSettings().analyzerOn);
}

TEST_CASE("editor: at host scales 1, 1.5 and 2 the layout holds and the curve lies within 2 px",
          "[editor][scale]")
{
    // JUCE 7.0.5 on Linux hands the host's scale to AudioProcessorEditor::setScaleFactor
    // (VST3: IPlugViewContentScaleSupport::setContentScaleFactor; LV2: the ui:scaleFactor
    // option), which sets a scale transform on the editor: the layout stays in unscaled
    // pixels and the host window is the editor's size times the scale.
    JuceGuard guard;
    KerfProcessor p;
    REQUIRE(p.importChain(parse(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 1500, "gain_db": 9, "q": 1.2, "design": "bilinear"}]})"))
                .isEmpty());
    std::unique_ptr<juce::AudioProcessorEditor> editor(p.createEditor());
    auto& kerf = kerfEditor(*editor);
    auto& view = kerf.responseView();
    const std::pair<int, int> sizes[] = {{KerfEditor::kMinWidth, KerfEditor::kMinHeight},
                                         {KerfEditor::kDefaultWidth, KerfEditor::kDefaultHeight},
                                         {1280, 900},
                                         {KerfEditor::kMaxWidth, KerfEditor::kMaxHeight}};
    double worst = 0.0;
    for (float scale : {1.0f, 1.5f, 2.0f})
    {
        editor->setScaleFactor(scale);
        for (const auto& [w, h] : sizes)
        {
            INFO("scale " << scale << ", size " << w << " x " << h);
            editor->setSize(w, h);
            CHECK(editor->getWidth() == w);
            CHECK(editor->getHeight() == h);
            CHECK(editor->getTransform() == juce::AffineTransform::scale(scale));
            // What the wrappers size the host window to: the editor's bounds, transformed.
            CHECK(editor->getBoundsInParent().getWidth() == juce::roundToInt(w * scale));
            CHECK(editor->getBoundsInParent().getHeight() == juce::roundToInt(h * scale));
            // The session keeps the unscaled size.
            CHECK(p.editorSettings().width == w);
            CHECK(p.editorSettings().height == h);
            std::vector<juce::String> outside;
            int count = 0;
            checkInside(*editor, "editor", outside, count);
            for (const auto& o : outside)
                FAIL_CHECK("outside its parent: " << o);
            CHECK(count > 20); // the editor's own (the list's rows lie inside its viewport)
            for (auto page : {DisplayDeck::Page::zPlane, DisplayDeck::Page::impulse,
                              DisplayDeck::Page::response})
            {
                kerf.displayDeck().setPage(page);
                outside.clear();
                checkInside(*editor, "editor", outside, count);
                for (const auto& o : outside)
                    FAIL_CHECK("outside its parent: " << o);
            }

            // The curve check of the snapshot tests, on a snapshot rendered at the scale.
            kerf.refreshResponse();
            REQUIRE(view.waitForCurve());
            const auto image =
                editor->createComponentSnapshot(editor->getLocalBounds(), true, scale);
            CHECK(image.getWidth() == juce::roundToInt(w * scale));
            CHECK(image.getHeight() == juce::roundToInt(h * scale));
            for (double f : {100.0, 1000.0, 10000.0})
            {
                INFO(f << " Hz");
                const double db = cookbookPeakingDb(f, 1500.0, 9.0, 1.2);
                const double e = curveErrorPx(image, scale, *editor, view, f, db);
                CHECK(e <= 2.0);
                worst = std::max(worst, e);
                // The check can fail: an expectation 3 dB off (about 7 px at the smallest
                // size's +-24 dB scale).
                CHECK(curveErrorPx(image, scale, *editor, view, f, db + 3.0) > 2.0);
            }
        }
    }
    std::printf("editor scale: worst curve error %.2f px over scales 1, 1.5, 2 and four sizes\n",
                worst);
}

TEST_CASE("editor: every visible control has a title, a role, a one-line tooltip and focus",
          "[editor][a11y]")
{
    JuceGuard guard;
    KerfProcessor p;
    REQUIRE(p.importChain(parse(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 1500, "gain_db": 9, "q": 1.2},
        {"type": "high_pass", "freq_hz": 80, "order": 2}]})"))
                .isEmpty());
    std::unique_ptr<juce::AudioProcessorEditor> editor(p.createEditor());
    auto& kerf = kerfEditor(*editor);
    kerf.refreshResponse();

    // The editor shows tooltips.
    bool tooltipWindow = false;
    for (auto* c : editor->getChildren())
        tooltipWindow = tooltipWindow || dynamic_cast<juce::TooltipWindow*>(c) != nullptr;
    CHECK(tooltipWindow);

    // Every parameter has its control in the stage list.
    for (auto* param : p.getParameters())
    {
        auto* ranged = dynamic_cast<juce::RangedAudioParameter*>(param);
        REQUIRE(ranged != nullptr);
        INFO(ranged->getParameterID());
        CHECK(kerf.stageList().controlFor(ranged->getParameterID()) != nullptr);
    }

    int checked = 0;
    auto run = [&](const char* what)
    {
        INFO(what);
        const auto a = auditEditor(*editor);
        for (const auto& problem : a.problems)
            FAIL_CHECK(problem);
        checked += a.controls;
        return a.controls;
    };
    // Each page of the display, the section handles' value field open, the analyzer on.
    const int responsePage = run("response page");
    // Each stage-list row shows at least its switch and its type (rows of stages that are off
    // are one compact line), plus the editor's own controls.
    CHECK(responsePage > 2 * kerf.stageList().numRows());
    kerf.displayDeck().setPage(DisplayDeck::Page::zPlane);
    run("z-plane page");
    kerf.displayDeck().setPage(DisplayDeck::Page::impulse);
    run("impulse page");
    kerf.displayDeck().setPage(DisplayDeck::Page::response);
    auto& handles = kerf.responseView().sectionHandles();
    REQUIRE(handles.isVisible());
    handles.select(0);
    REQUIRE(handles.openField(SectionHandles::Field::frequency));
    REQUIRE(handles.field() != nullptr);
    run("value field open");
    kerf.analyzerView().setAnalyzerOn(true, false);
    run("analyzer on");
    // Every stage on: every row of the stage list shows its values.
    for (int s = 0; s < kNumSectionSlots; ++s)
        p.state().getParameter(ids::slotOn(s))->setValueNotifyingHost(1.0f);
    for (int c = 0; c < kNumCombSlots; ++c)
        p.state().getParameter(ids::comb(c, "on"))->setValueNotifyingHost(1.0f);
    p.state().getParameter(ids::echoOn)->setValueNotifyingHost(1.0f);
    kerf.stageList().refresh();
    const int everyStage = run("every stage on");
    CHECK(everyStage > responsePage);
    std::printf("editor accessibility: %d visible controls audited over six states\n", checked);

    // The audit protects future controls: a bare slider or button fails it.
    juce::Slider bare;
    juce::TextButton unnamed;
    unnamed.setButtonText("?");
    editor->addAndMakeVisible(bare);
    editor->addAndMakeVisible(unnamed);
    const auto a = auditEditor(*editor);
    int bareProblems = 0, buttonProblems = 0;
    for (const auto& problem : a.problems)
    {
        bareProblems += problem.contains("Slider") ? 1 : 0;
        buttonProblems += problem.contains("'?'") ? 1 : 0;
    }
    CHECK(bareProblems == 3);   // no title, no tooltip, no keyboard focus
    CHECK(buttonProblems == 1); // its text names it; no tooltip
    editor->removeChildComponent(&bare);
    editor->removeChildComponent(&unnamed);
}
