#include "DisplayDeck.h"

namespace kerf
{

DisplayDeck::DisplayDeck(ResponseView& r) : response(r)
{
    auto pageButton = [this](juce::TextButton& b, Page p, const char* id, const char* tip)
    {
        b.setClickingTogglesState(true);
        b.setRadioGroupId(7321);
        b.setComponentID(id);
        b.setTooltip(tip);
        b.setConnectedEdges(juce::Button::ConnectedOnLeft | juce::Button::ConnectedOnRight);
        b.onClick = [this, &b, p]
        {
            if (b.getToggleState())
                setPage(p);
        };
        addAndMakeVisible(b);
    };
    pageButton(responseButton, Page::response, "pageResponse",
               "Magnitude, phase or group delay over frequency");
    pageButton(zPlaneButton, Page::zPlane, "pageZPlane",
               "Poles and zeros of the enabled stages on the z-plane");
    pageButton(impulseButton, Page::impulse, "pageImpulse",
               "The chain's impulse response over time");
    responseButton.setToggleState(true, juce::dontSendNotification);
    addAndMakeVisible(response);
    addChildComponent(zPlane);
    addChildComponent(impulse);
}

void DisplayDeck::setChain(const dsp::ChainSpec& chain, double sampleRateHz, double outputGainDb)
{
    zPlane.setChain(chain, sampleRateHz);
    impulse.setChain(chain, sampleRateHz, outputGainDb);
}

void DisplayDeck::setPage(Page p)
{
    shown = p;
    (p == Page::response ? responseButton
     : p == Page::zPlane ? zPlaneButton
                         : impulseButton)
        .setToggleState(true, juce::dontSendNotification);
    response.setVisible(p == Page::response);
    zPlane.setVisible(p == Page::zPlane);
    impulse.setVisible(p == Page::impulse);
}

void DisplayDeck::paint(juce::Graphics& g)
{
    g.fillAll(juce::Colour(0xff1d232a));
}

void DisplayDeck::resized()
{
    auto area = getLocalBounds();
    auto strip = area.removeFromTop(24).reduced(4, 2);
    for (auto* b : {&responseButton, &zPlaneButton, &impulseButton})
        b->setBounds(strip.removeFromLeft(92));
    for (juce::Component* c :
         {static_cast<juce::Component*>(&response), static_cast<juce::Component*>(&zPlane),
          static_cast<juce::Component*>(&impulse)})
        c->setBounds(area);
}

} // namespace kerf
