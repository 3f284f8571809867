#pragma once
// The editor's display area: a switch between the response display, the z-plane view and
// the impulse-response view.
#include "ImpulseView.h"
#include "PoleZeroView.h"
#include "ResponseView.h"

#include <juce_gui_basics/juce_gui_basics.h>

namespace kerf
{

/// Hosts the editor's ResponseView (owned by the editor) and the z-plane and impulse views,
/// one at a time, chosen by a row of three buttons. Only the shown view evaluates: the
/// hidden ones keep the chain and compute when shown.
class DisplayDeck : public juce::Component
{
public:
    /// Which view is shown.
    enum class Page
    {
        response,
        zPlane,
        impulse,
    };

    explicit DisplayDeck(ResponseView& response);

    /// Hands the chain to the z-plane and impulse views (the editor feeds the response view).
    void setChain(const dsp::ChainSpec& chain, double sampleRateHz, double outputGainDb);
    void setPage(Page page);
    Page page() const noexcept { return shown; }

    PoleZeroView& poleZeroView() noexcept { return zPlane; }
    ImpulseView& impulseView() noexcept { return impulse; }

    void paint(juce::Graphics& g) override;
    void resized() override;

private:
    ResponseView& response;
    PoleZeroView zPlane;
    ImpulseView impulse;
    Page shown = Page::response;
    juce::TextButton responseButton{"Response"}, zPlaneButton{"Poles/zeros"},
        impulseButton{"Impulse"};
};

} // namespace kerf
