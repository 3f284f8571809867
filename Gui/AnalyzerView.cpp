#include "AnalyzerView.h"

#include "PluginProcessor.h"

#include <algorithm>
#include <cmath>

namespace kerf
{

AnalyzerView::AnalyzerView(KerfProcessor& p) : processor(p), analysis(p)
{
    toggle.setClickingTogglesState(true);
    toggle.setComponentID("analyzer");
    toggle.setTitle("Live analyzer");
    toggle.setDescription("Shows the input and output spectra with held peaks");
    toggle.setTooltip("Live input and output spectra with held peaks (0 to -96 dBFS; off costs "
                      "nothing)");
    toggle.onClick = [this] { setAnalyzerOn(toggle.getToggleState()); };
    addAndMakeVisible(toggle);
}

AnalyzerView::~AnalyzerView()
{
    stopTimer();
    analysis.setEnabled(false);
    if (target != nullptr)
        target->paintUnderCurves = nullptr;
}

void AnalyzerView::attachTo(ResponseView& view)
{
    if (target != nullptr)
        target->paintUnderCurves = nullptr;
    target = &view;
    target->paintUnderCurves = [this](juce::Graphics& g) { paintSpectra(g); };
    bandsPlot = {};
}

void AnalyzerView::setAnalyzerOn(bool on, bool runThread)
{
    toggle.setToggleState(on, juce::dontSendNotification);
    processor.setAnalyzerSwitch(on);
    if (on == analysis.isEnabled())
        return;
    analysis.setEnabled(on, runThread);
    if (on)
    {
        bandsPlot = {}; // new bands for the current geometry at the next refresh
        if (runThread)
            startTimerHz(30);
    }
    else
    {
        stopTimer();
        if (target != nullptr && drawn)
            target->repaint(target->plotArea());
        drawn = false;
    }
}

void AnalyzerView::followGeometry()
{
    if (target == nullptr)
        return;
    const auto plot = target->plotArea();
    if (plot == bandsPlot && target->highHz() == bandsHighHz)
        return;
    bandsPlot = plot;
    bandsHighHz = target->highHz();
    // One band per pixel column, with exactly the response view's frequency mapping.
    std::vector<double> edges;
    edges.reserve(static_cast<std::size_t>(plot.getWidth()) + 1);
    for (int c = 0; c <= plot.getWidth(); ++c)
        edges.push_back(target->frequencyForX(plot.getX() + c));
    expectedLayout = plot.getWidth() > 0 ? analysis.setBandEdges(std::move(edges)) : -1;
}

bool AnalyzerView::refresh()
{
    if (!analysis.isEnabled() || target == nullptr)
        return false;
    followGeometry();
    if (!analysis.update())
        return false;
    target->repaint(target->plotArea());
    return true;
}

float AnalyzerView::yForLevel(double db) const noexcept
{
    const auto plot = target->plotArea();
    const double t = (kTopDb - std::clamp(db, kBottomDb, kTopDb)) / (kTopDb - kBottomDb);
    return static_cast<float>(plot.getY() + t * plot.getHeight());
}

void AnalyzerView::paintSpectra(juce::Graphics& g) const
{
    drawn = false;
    if (!analysis.isEnabled() || target == nullptr)
        return;
    const auto& s = analysis.current();
    const auto plot = target->plotArea();
    const int width = plot.getWidth();
    if (width <= 0 || s.layout != expectedLayout || static_cast<int>(s.inputLevel.size()) != width)
        return; // bands of an older geometry: wait for the next snapshot
    drawn = true;
    const int x0 = plot.getX(), bottom = plot.getBottom();
    // Levels as translucent areas rising from the bottom (input first, output over it),
    // each topped by a one-pixel edge; the held peaks as thin lines above them. Everything
    // is whole-pixel rectangles, which the software renderer fills fastest.
    auto area = [&](const std::vector<float>& level, juce::Colour colour, float fillAlpha)
    {
        g.setColour(colour.withAlpha(fillAlpha));
        for (int c = 0; c < width; ++c)
        {
            const int y = juce::roundToInt(yForLevel(level[static_cast<std::size_t>(c)]));
            if (y < bottom)
                g.fillRect(x0 + c, y, 1, bottom - y);
        }
    };
    auto line = [&](const std::vector<float>& level, juce::Colour colour)
    {
        g.setColour(colour);
        int previous = juce::roundToInt(yForLevel(level[0]));
        for (int c = 0; c < width; ++c)
        {
            const int y = juce::roundToInt(yForLevel(level[static_cast<std::size_t>(c)]));
            const int top = std::min(y, previous), low = std::max(y, previous);
            if (top < bottom)
                g.fillRect(x0 + c, top, 1, std::min(low, bottom - 1) - top + 1);
            previous = y;
        }
    };
    area(s.inputLevel, inputColour(), 0.22f);
    line(s.inputLevel, inputColour().withAlpha(0.55f));
    area(s.outputLevel, outputColour(), 0.16f);
    line(s.outputLevel, outputColour().withAlpha(0.75f));
    line(s.inputPeak, inputColour().withAlpha(0.4f));
    line(s.outputPeak, outputColour().withAlpha(0.5f));

    g.setFont(11.0f);
    const int textY = bottom - 16;
    g.setColour(inputColour());
    g.drawText("in", plot.getRight() - 150, textY, 20, 14, juce::Justification::right);
    g.setColour(outputColour());
    g.drawText("out", plot.getRight() - 128, textY, 24, 14, juce::Justification::right);
    g.setColour(juce::Colour(0xffd8cbb0).withAlpha(0.7f));
    g.drawText("0 to -96 dBFS", plot.getRight() - 100, textY, 96, 14, juce::Justification::right);
}

void AnalyzerView::resized()
{
    toggle.setBounds(getLocalBounds());
}

} // namespace kerf
