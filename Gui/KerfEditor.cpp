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
      stages(p.state())
{
    const auto saved = p.editorSettings(); // before any resize records a size
    addAndMakeVisible(display);
    response.attachParameters(p.state());
    addAndMakeVisible(stages);
    stages.linkHandles(&response.sectionHandles());
    addAndMakeVisible(presets);

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
    addAndMakeVisible(analyzer);
    analyzer.attachTo(response);
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
    stages.linkHandles(nullptr);
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
    // The preset bar takes a second line when the editor is narrow.
    auto sessionRow = area.removeFromTop(PresetBar::preferredHeight(getWidth() - 88));
    auto analyzerArea = sessionRow.removeFromRight(88);
    analyzer.setBounds(analyzerArea.removeFromTop(PresetBar::kLineHeight).reduced(4));
    presets.setBounds(sessionRow);
    auto echoRow = area.removeFromTop(34).reduced(4);
    listenButton.setBounds(echoRow.removeFromLeft(160));
    echoRow.removeFromLeft(6);
    discardButton.setBounds(echoRow.removeFromRight(80));
    echoRow.removeFromRight(4);
    applyButton.setBounds(echoRow.removeFromRight(120));
    echoStatus.setBounds(echoRow.reduced(6, 0));
    auto top = area.removeFromTop(area.getHeight() * 6 / 11);
    display.setBounds(top.reduced(4));
    stages.setBounds(area);
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
}

} // namespace kerf
