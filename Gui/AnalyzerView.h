#pragma once
// The live analyzer's display: the input and output spectra with their held peaks, drawn
// inside the response view's plot under its curves, and the switch that turns it on.
#include "LiveAnalyzer.h"
#include "ResponseView.h"

#include <juce_gui_basics/juce_gui_basics.h>

namespace kerf
{

class KerfProcessor;

/// The component is the on/off switch (off by default); the spectra are painted by the
/// attached ResponseView (its paintUnderCurves hook), on the same log-frequency axis: each
/// pixel column of the plot is one analysis band. Vertically 0 dBFS is the plot's top and
/// -96 dBFS its bottom (12 dB per division of the +-24 dB magnitude grid).
class AnalyzerView : public juce::Component, private juce::Timer
{
public:
    explicit AnalyzerView(KerfProcessor& processor);
    ~AnalyzerView() override;

    /// Draws into `view` from now on (the view must outlive this or be detached by it).
    void attachTo(ResponseView& view);
    /// The switch (also the button's toggle); the processor keeps it for the session
    /// (KerfProcessor::setAnalyzerSwitch), so the editor opens with it as it was.
    void setAnalyzerOn(bool on, bool runThread = true);
    bool analyzerOn() const noexcept { return analysis.isEnabled(); }
    LiveAnalyzer& analyzer() noexcept { return analysis; }

    /// What the 30 Hz timer does: follows the plot's geometry, takes the newest snapshot and
    /// repaints the plot when it changed. Returns true when it asked for a repaint.
    bool refresh();
    /// Paints the spectra in the attached view's coordinates (its hook calls this).
    void paintSpectra(juce::Graphics& g) const;

    /// dBFS shown at the plot's top and bottom.
    static constexpr double kTopDb = 0.0, kBottomDb = -96.0;
    /// Fills and lines of the two spectra (our own tones; not the response curve's colour).
    static juce::Colour inputColour() noexcept { return juce::Colour(0xff8b9bb4); }
    static juce::Colour outputColour() noexcept { return juce::Colour(0xffb8e0cf); }

    void resized() override;

private:
    void timerCallback() override { refresh(); }
    void followGeometry();
    float yForLevel(double db) const noexcept;

    KerfProcessor& processor;
    LiveAnalyzer analysis;
    ResponseView* target = nullptr;
    juce::TextButton toggle{"Analyzer"};
    juce::Rectangle<int> bandsPlot; // the plot the current bands were made for
    double bandsHighHz = 0.0;
    int expectedLayout = -1;
    mutable bool drawn = false; // whether the last paint showed spectra
};

} // namespace kerf
