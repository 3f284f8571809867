#include "ResponseView.h"

#include "Response/SystemFunction.h"

#include <cmath>
#include <cstring>

namespace kerf
{

namespace
{
bool sameChain(const dsp::ChainSpec& a, const dsp::ChainSpec& b)
{
    if (a.numStages != b.numStages)
        return false;
    for (int i = 0; i < a.numStages; ++i)
        if (!(a.stages[static_cast<std::size_t>(i)] == b.stages[static_cast<std::size_t>(i)]))
            return false;
    return true;
}
} // namespace

ResponseView::ResponseView()
{
    setOpaque(true);
}

void ResponseView::setChain(const dsp::ChainSpec& newChain, double sampleRateHz)
{
    if (sampleRateHz == sampleRate && sameChain(newChain, chain) && !magnitudeDb.empty())
        return;
    chain = newChain;
    sampleRate = sampleRateHz;
    recompute();
    repaint();
}

void ResponseView::resized()
{
    recompute();
}

float ResponseView::xForFrequency(double freqHz) const
{
    const double t = std::log(freqHz / kLowHz) / std::log(kHighHz / kLowHz);
    return static_cast<float>(t * getWidth());
}

float ResponseView::yForDb(double db) const
{
    const double t = (kTopDb - db) / (kTopDb - kBottomDb);
    return static_cast<float>(t * getHeight());
}

void ResponseView::recompute()
{
    const int w = getWidth();
    magnitudeDb.clear();
    curve.clear();
    if (w <= 1)
        return;
    // One evaluation per pixel column, at the column's own frequency.
    std::vector<double> freqs;
    freqs.reserve(static_cast<std::size_t>(w));
    const double nyquist = 0.5 * sampleRate;
    for (int x = 0; x < w; ++x)
    {
        const double f = kLowHz * std::pow(kHighHz / kLowHz, x / static_cast<double>(w));
        if (f >= nyquist)
            break;
        freqs.push_back(f);
    }
    magnitudeDb.resize(freqs.size());
    dsp::chainMagnitudeDb(chain, sampleRate, freqs.data(), magnitudeDb.data(),
                          static_cast<int>(freqs.size()));
    for (std::size_t i = 0; i < freqs.size(); ++i)
    {
        const float x = xForFrequency(freqs[i]);
        const float y = juce::jlimit(-2.0f, getHeight() + 2.0f, yForDb(magnitudeDb[i]));
        if (i == 0)
            curve.startNewSubPath(x, y);
        else
            curve.lineTo(x, y);
    }
}

void ResponseView::paint(juce::Graphics& g)
{
    // Our own palette: deep slate background, sand grid, a single warm curve.
    g.fillAll(juce::Colour(0xff1d232a));
    g.setFont(11.0f);
    for (double f : {20.0, 50.0, 100.0, 200.0, 500.0, 1000.0, 2000.0, 5000.0, 10000.0, 20000.0})
    {
        const float x = xForFrequency(f);
        g.setColour(juce::Colour(0x33d8cbb0));
        g.drawVerticalLine(juce::roundToInt(x), 0.0f, static_cast<float>(getHeight()));
        g.setColour(juce::Colour(0x99d8cbb0));
        const auto label = f >= 1000.0 ? juce::String(f / 1000.0, 0) + "k" : juce::String(f, 0);
        g.drawText(label, juce::roundToInt(x) + 2, getHeight() - 14, 40, 12,
                   juce::Justification::left);
    }
    for (double db = kBottomDb; db <= kTopDb; db += 6.0)
    {
        const float y = yForDb(db);
        g.setColour(juce::Colour(db == 0.0 ? 0x66d8cbb0 : 0x22d8cbb0));
        g.drawHorizontalLine(juce::roundToInt(y), 0.0f, static_cast<float>(getWidth()));
        g.setColour(juce::Colour(0x99d8cbb0));
        g.drawText(juce::String(db, 0) + " dB", 2, juce::roundToInt(y) - 12, 50, 12,
                   juce::Justification::left);
    }
    g.setColour(juce::Colour(0xfff2a65a));
    g.strokePath(curve, juce::PathStrokeType(2.0f));
}

} // namespace kerf
