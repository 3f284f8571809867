#include "KerfEditor.h"

#include "PluginProcessor.h"

namespace kerf
{

KerfEditor::KerfEditor(KerfProcessor& p) : AudioProcessorEditor(p), kerfProcessor(p), controls(p)
{
    addAndMakeVisible(response);
    addAndMakeVisible(controls);
    protectionLabel.setText("ceiling acting", juce::dontSendNotification);
    protectionLabel.setColour(juce::Label::textColourId, juce::Colour(0xfff2a65a));
    protectionLabel.setTooltip("The output protection is limiting peaks at its ceiling");
    addChildComponent(protectionLabel);
    setResizable(true, true);
    setResizeLimits(480, 360, 2400, 1600);
    setSize(760, 560);
    refreshResponse();
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
    auto area = getLocalBounds();
    auto top = area.removeFromTop(area.getHeight() * 5 / 11);
    protectionLabel.setBounds(top.getRight() - 120, top.getY() + 4, 116, 18);
    response.setBounds(top.reduced(4));
    controls.setBounds(area);
}

void KerfEditor::refreshResponse()
{
    const double rate = kerfProcessor.getSampleRate() > 0 ? kerfProcessor.getSampleRate() : 48000.0;
    response.setChain(kerfProcessor.exportChain(), rate);
}

void KerfEditor::timerCallback()
{
    refreshResponse();
    if (kerfProcessor.takeProtectionCount() > 0)
        protectionHoldFrames = 30;
    else if (protectionHoldFrames > 0)
        --protectionHoldFrames;
    protectionLabel.setVisible(protectionHoldFrames > 0);
}

} // namespace kerf
