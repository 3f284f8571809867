#include "KerfEditor.h"

#include "PluginProcessor.h"

namespace kerf
{

KerfEditor::ResizeGrip::ResizeGrip(juce::Component& editor,
                                   juce::ComponentBoundsConstrainer* limits)
    : juce::ResizableCornerComponent(&editor, limits)
{
    setComponentID("resizeGrip");
    setTitle("Resize grip");
    setDescription("Drag to resize the editor");
    setTooltip("Drag to resize the editor; the size is kept with the session");
}

std::unique_ptr<juce::AccessibilityHandler> KerfEditor::ResizeGrip::createAccessibilityHandler()
{
    // A mouse affordance drawn as a grip (hosts resize their windows themselves).
    return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::image);
}

KerfEditor::KerfEditor(KerfProcessor& p)
    : AudioProcessorEditor(p), kerfProcessor(p), settingsGeneration(p.editorSettingsGeneration()),
      controls(p)
{
    const auto saved = p.editorSettings(); // before any resize records a size
    addAndMakeVisible(display);
    response.attachParameters(p.state());
    addAndMakeVisible(controls);
    protectionLabel.setText("ceiling acting", juce::dontSendNotification);
    protectionLabel.setColour(juce::Label::textColourId, juce::Colour(0xfff2a65a));
    protectionLabel.setTooltip("The output protection is limiting peaks at its ceiling");
    addChildComponent(protectionLabel);

    listenButton.setTooltip("Records a few seconds of the input and estimates its discrete "
                            "reflections (delay, gain, confidence)");
    applyButton.setTooltip("Sets the echo-cancellation stage to the values found and turns it on");
    discardButton.setTooltip("Forgets the values found");
    echoStatus.setTooltip("What the echo listener is doing or found");
    listenButton.onClick = [this] { kerfProcessor.echoCapture().start(); };
    applyButton.onClick = [this]
    {
        dsp::EchoEstimate estimate;
        if (kerfProcessor.echoCapture().takeProposal(estimate))
            kerfProcessor.applyEchoEstimate(estimate);
    };
    discardButton.onClick = [this] { kerfProcessor.echoCapture().cancel(); };
    echoStatus.setColour(juce::Label::textColourId, juce::Colour(0xffd8cbb0));
    for (auto* c : std::initializer_list<juce::Component*>{&listenButton, &applyButton,
                                                           &discardButton, &echoStatus})
        addAndMakeVisible(c);
    undoButton.onClick = [this] { kerfProcessor.undo(); };
    redoButton.onClick = [this] { kerfProcessor.redo(); };
    compareButton.setTooltip("A/B: keeps these settings in the active slot and loads the other "
                             "(at first a copy of these)");
    compareButton.onClick = [this] { kerfProcessor.switchSlot(); };
    flatButton.setTooltip("Switches every section, comb and echo stage off at once; output "
                          "gain and protection stay (undo brings the stages back)");
    flatButton.onClick = [this] { kerfProcessor.setAllFlat(); };
    undoButton.setComponentID("undo");
    redoButton.setComponentID("redo");
    compareButton.setComponentID("compare");
    flatButton.setComponentID("allFlat");
    for (auto* c : std::initializer_list<juce::Component*>{&undoButton, &redoButton, &compareButton,
                                                           &flatButton})
        addAndMakeVisible(c);
    addAndMakeVisible(analyzer);
    analyzer.attachTo(response);
    undoButton.setTitle("Undo");
    redoButton.setTitle("Redo");
    compareButton.setTitle("A/B compare");
    flatButton.setTitle("All flat");
    updateSessionRow();
    // Host-resizable (the wrappers ask isResizable), with our own corner grip.
    setResizable(true, false);
    setResizeLimits(kMinWidth, kMinHeight, kMaxWidth, kMaxHeight);
    grip = std::make_unique<ResizeGrip>(*this, getConstrainer());
    grip->setAlwaysOnTop(true);
    addAndMakeVisible(*grip);
    setSize(saved.width > 0 ? juce::jlimit(kMinWidth, kMaxWidth, saved.width) : kDefaultWidth,
            saved.height > 0 ? juce::jlimit(kMinHeight, kMaxHeight, saved.height) : kDefaultHeight);
    analyzer.setAnalyzerOn(saved.analyzerOn);
    refreshResponse();
    updateEchoPanel();
    startTimerHz(30);
}

KerfEditor::~KerfEditor()
{
    stopTimer();
}

void KerfEditor::paint(juce::Graphics& g)
{
    g.fillAll(juce::Colour(0xff14191e));
}

void KerfEditor::resized()
{
    // Unscaled pixels: a host's scale factor is a transform on top and changes nothing here.
    kerfProcessor.setEditorSize(getWidth(), getHeight());
    if (grip != nullptr)
        grip->setBounds(getWidth() - 18, getHeight() - 18, 18, 18);
    auto area = getLocalBounds();
    auto sessionRow = area.removeFromTop(34).reduced(4);
    for (auto* b : {&undoButton, &redoButton, &compareButton})
    {
        b->setBounds(sessionRow.removeFromLeft(80));
        sessionRow.removeFromLeft(6);
    }
    flatButton.setBounds(sessionRow.removeFromRight(100));
    sessionRow.removeFromRight(6);
    analyzer.setBounds(sessionRow.removeFromRight(84));
    auto echoRow = area.removeFromTop(34).reduced(4);
    listenButton.setBounds(echoRow.removeFromLeft(160));
    echoRow.removeFromLeft(6);
    discardButton.setBounds(echoRow.removeFromRight(80));
    echoRow.removeFromRight(4);
    applyButton.setBounds(echoRow.removeFromRight(120));
    echoStatus.setBounds(echoRow.reduced(6, 0));
    auto top = area.removeFromTop(area.getHeight() * 6 / 11);
    protectionLabel.setBounds(top.getRight() - 120, top.getY() + 4, 116, 18);
    display.setBounds(top.reduced(4));
    controls.setBounds(area);
}

void KerfEditor::refreshResponse()
{
    const double rate = kerfProcessor.getSampleRate() > 0 ? kerfProcessor.getSampleRate() : 48000.0;
    // The chain's H(z) and the output gain: what the plugin does to a signal below the
    // protection ceiling. Only a change re-evaluates (ResponseView::setChain compares).
    const auto* gain = kerfProcessor.state().getRawParameterValue(ids::outputGain);
    const auto chain = kerfProcessor.exportChain();
    const double gainDb = gain != nullptr ? gain->load() : 0.0;
    response.setChain(chain, rate, gainDb);
    display.setChain(chain, rate, gainDb);
}

void KerfEditor::updateEchoPanel()
{
    using State = EchoCapture::State;
    auto& capture = kerfProcessor.echoCapture();
    const State state = capture.state();
    juce::String text;
    switch (state)
    {
    case State::idle:
        text = "Echo listener idle";
        break;
    case State::recording:
        text = "Listening... " + juce::String(juce::roundToInt(100.0f * capture.progress())) + "%";
        break;
    case State::analysing:
        text = "Estimating...";
        break;
    case State::ready:
    {
        dsp::EchoEstimate estimate;
        capture.peekProposal(estimate);
        if (estimate.reflections.empty())
            text = "No discrete echo found";
        for (const auto& r : estimate.reflections)
            text << (text.isEmpty() ? "" : ";  ") << juce::String(r.delayMs, 2) << " ms, gain "
                 << juce::String(r.gain, 2) << " (confidence " << juce::String(r.confidence, 2)
                 << ")";
        break;
    }
    }
    echoStatus.setText(text, juce::dontSendNotification);
    listenButton.setEnabled(state == State::idle || state == State::ready);
    applyButton.setEnabled(state == State::ready);
    discardButton.setEnabled(state != State::idle);
}

void KerfEditor::updateSessionRow()
{
    auto& history = kerfProcessor.history();
    undoButton.setEnabled(history.canUndo());
    redoButton.setEnabled(history.canRedo());
    undoButton.setTooltip(history.canUndo() ? "Undo: " + history.undoName() : "Nothing to undo");
    redoButton.setTooltip(history.canRedo() ? "Redo: " + history.redoName() : "Nothing to redo");
    compareButton.setButtonText(kerfProcessor.activeSlot() == CompareSlot::a ? "A/B: A" : "A/B: B");
}

void KerfEditor::applySavedSettings()
{
    const auto saved = kerfProcessor.editorSettings();
    if (saved.width > 0 && saved.height > 0)
        setSize(juce::jlimit(kMinWidth, kMaxWidth, saved.width),
                juce::jlimit(kMinHeight, kMaxHeight, saved.height));
    kerfProcessor.setEditorSize(getWidth(), getHeight()); // a state without a size keeps ours
    analyzer.setAnalyzerOn(saved.analyzerOn);
}

void KerfEditor::timerCallback()
{
    if (const int g = kerfProcessor.editorSettingsGeneration(); g != settingsGeneration)
    {
        settingsGeneration = g;
        applySavedSettings();
    }
    refreshResponse();
    updateEchoPanel();
    updateSessionRow();
    if (kerfProcessor.takeProtectionCount() > 0)
        protectionHoldFrames = 30;
    else if (protectionHoldFrames > 0)
        --protectionHoldFrames;
    protectionLabel.setVisible(protectionHoldFrames > 0);
}

} // namespace kerf
