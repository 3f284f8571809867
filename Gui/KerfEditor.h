#pragma once
// The editor: the preset bar, the chain's response curve and the stage list.
#include "AnalyzerView.h"
#include "DisplayDeck.h"
#include "PresetBar.h"
#include "ResponseView.h"
#include "StageList.h"

#include <juce_audio_processors/juce_audio_processors.h>

namespace kerf
{

class KerfProcessor;

/// Plain, honest editor: the curve is the chain's exact H(z), the stage list's controls are
/// the parameters themselves. Resizable within fixed limits; its size and the analyzer switch
/// live in the processor's state (KerfProcessor::editorSettings), so a session reopens the
/// editor as it was. A host's scale factor (setScaleFactor: VST3 setContentScaleFactor, LV2
/// ui:scaleFactor) scales the whole editor; the layout works in unscaled pixels.
class KerfEditor : public juce::AudioProcessorEditor, private juce::Timer
{
public:
    /// Size limits and the size of a first opening, in unscaled pixels.
    static constexpr int kMinWidth = 560, kMinHeight = 440;
    static constexpr int kMaxWidth = 2400, kMaxHeight = 1600;
    static constexpr int kDefaultWidth = 760, kDefaultHeight = 600;

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
    /// The stage list: a row per stage slot, and the output row (every parameter).
    StageList& stageList() noexcept { return stages; }
    /// Presets, A/B, undo/redo, All flat and the protection indicator.
    PresetBar& presetBar() noexcept { return presets; }

private:
    void timerCallback() override;
    /// Takes the size and analyzer switch from the processor (after a restore).
    void applySavedSettings();

    KerfProcessor& kerfProcessor;
    int settingsGeneration = 0;
    ResponseView response;
    DisplayDeck display{response};
    StageList stages;
    PresetBar presets{kerfProcessor};

    // Echo panel: listen, then apply or discard what was found.
    void updateEchoPanel();
    juce::TextButton listenButton{"Listen for room echo"};
    juce::TextButton applyButton{"Apply echo fix"};
    juce::TextButton discardButton{"Discard"};
    juce::Label echoStatus;

public:
    /// The live analyzer's switch; it draws into the response view (off by default).
    AnalyzerView& analyzerView() noexcept { return analyzer; }

private:
    AnalyzerView analyzer{kerfProcessor};

    /// The bottom-right corner resizer, with a title, a role and a tooltip like every control.
    class ResizeGrip : public juce::ResizableCornerComponent, public juce::SettableTooltipClient
    {
    public:
        ResizeGrip(juce::Component& editor, juce::ComponentBoundsConstrainer* limits);
        std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override;
    };
    std::unique_ptr<ResizeGrip> grip;
    juce::TooltipWindow tooltips{this, 700};
};

} // namespace kerf
