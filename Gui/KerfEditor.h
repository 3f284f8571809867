#pragma once
// The first editor: the chain's response curve over a plain list of every parameter.
#include "AnalyzerView.h"
#include "DisplayDeck.h"
#include "ResponseView.h"

#include <juce_audio_processors/juce_audio_processors.h>

namespace kerf
{

class KerfProcessor;

/// Plain, honest editor: the curve is the chain's exact H(z), the controls are the
/// parameters themselves. The full editor replaces it later.
class KerfEditor : public juce::AudioProcessorEditor, private juce::Timer
{
public:
    explicit KerfEditor(KerfProcessor& processor);
    ~KerfEditor() override;

    void paint(juce::Graphics& g) override;
    void resized() override;

    /// Pulls the current chain into the response view now (the timer does it 30 times a
    /// second); the view evaluates H(z) again only when the chain or output gain changed.
    void refreshResponse();
    ResponseView& responseView() noexcept { return response; }
    /// The display area: response, z-plane or impulse view.
    DisplayDeck& displayDeck() noexcept { return display; }

private:
    void timerCallback() override;

    KerfProcessor& kerfProcessor;
    ResponseView response;
    DisplayDeck display{response};
    juce::GenericAudioProcessorEditor controls;
    juce::Label protectionLabel;
    int protectionHoldFrames = 0;

    // Echo panel: listen, then apply or discard what was found.
    void updateEchoPanel();
    juce::TextButton listenButton{"Listen for room echo"};
    juce::TextButton applyButton{"Apply echo fix"};
    juce::TextButton discardButton{"Discard"};
    juce::Label echoStatus;

    // Session row: undo, redo, the A/B switch, all flat (KerfProcessor's API).
    void updateSessionRow();
    juce::TextButton undoButton{"Undo"};
    juce::TextButton redoButton{"Redo"};
    juce::TextButton compareButton{"A/B: A"};
    juce::TextButton flatButton{"All flat"};

public:
    /// The live analyzer's switch; it draws into the response view (off by default).
    AnalyzerView& analyzerView() noexcept { return analyzer; }

private:
    AnalyzerView analyzer{kerfProcessor};
};

} // namespace kerf
