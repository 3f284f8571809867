#include "Plot.h"
#include "SafeOutput.h"

#include <juce_graphics/juce_graphics.h>

#include <cmath>

namespace kerf::cli
{

namespace
{
// Our own palette: paper background, ink grid, one colour per quantity.
const juce::Colour kPaper(0xfffbf8f1), kInk(0xff2b2f36), kGrid(0x332b2f36);
const juce::Colour kMagnitude(0xffb4451f), kPhase(0xff1f6f8b), kDelay(0xff4a7f2a);

struct Panel
{
    juce::Rectangle<float> area;
    double lo, hi; // value range
    juce::String label;
};

/// Rounds a range outwards to "nice" steps and returns the step.
double niceRange(double& lo, double& hi, int targetTicks)
{
    if (!(hi > lo))
    {
        lo -= 1.0;
        hi += 1.0;
    }
    const double raw = (hi - lo) / targetTicks;
    const double mag = std::pow(10.0, std::floor(std::log10(raw)));
    double step = mag;
    for (double m : {1.0, 2.0, 2.5, 5.0, 10.0})
        if (raw <= m * mag)
        {
            step = m * mag;
            break;
        }
    lo = std::floor(lo / step) * step;
    hi = std::ceil(hi / step) * step;
    return step;
}

juce::String frequencyLabel(double f)
{
    return f >= 1000.0
               ? juce::String(f / 1000.0, f >= 10000.0 || std::fmod(f, 1000.0) == 0.0 ? 0 : 1) + "k"
               : juce::String(f, 0);
}
} // namespace

juce::String writeResponsePlot(const juce::File& file,
                               const std::vector<dsp::ResponsePoint>& points, double sampleRateHz,
                               const juce::String& title)
{
    if (points.size() < 2)
        return "a plot needs at least two frequencies";
    const int width = 1200, height = 960;
    juce::Image image(juce::Image::RGB, width, height, true);
    juce::Graphics g(image);
    g.fillAll(kPaper);

    const double fLo = points.front().freqHz, fHi = points.back().freqHz;
    const float left = 90.0f, right = width - 30.0f;
    auto xOf = [&](double f)
    { return left + static_cast<float>(std::log(f / fLo) / std::log(fHi / fLo)) * (right - left); };

    g.setColour(kInk);
    g.setFont(juce::Font(20.0f, juce::Font::bold));
    g.drawText(title, 20, 8, width - 40, 28, juce::Justification::centredLeft);

    struct Series
    {
        juce::String name, unit;
        juce::Colour colour;
        std::vector<double> values;
    };
    std::vector<Series> series(3);
    series[0] = {"Magnitude", "dB", kMagnitude, {}};
    series[1] = {"Phase (unwrapped)", "degrees", kPhase, {}};
    series[2] = {"Group delay", "ms", kDelay, {}};
    for (const auto& p : points)
    {
        series[0].values.push_back(std::max(p.magnitudeDb, -120.0));
        series[1].values.push_back(p.phaseDeg);
        series[2].values.push_back(p.groupDelaySamples * 1000.0 / sampleRateHz);
    }

    const float top = 70.0f, panelGap = 50.0f;
    const float panelHeight = (height - top - 40.0f - 2 * panelGap) / 3.0f;
    for (std::size_t k = 0; k < series.size(); ++k)
    {
        const float y0 = top + static_cast<float>(k) * (panelHeight + panelGap);
        const juce::Rectangle<float> area(left, y0, right - left, panelHeight);
        double lo = *std::min_element(series[k].values.begin(), series[k].values.end());
        double hi = *std::max_element(series[k].values.begin(), series[k].values.end());
        if (k == 0) // at least +-6 dB so flat reads as flat; at most 72 dB below the top
        {
            hi = std::max(hi, 6.0);
            lo = std::max(std::min(lo, -6.0), hi - 72.0);
        }
        const double step = niceRange(lo, hi, 5);
        auto yOf = [&](double v)
        { return area.getBottom() - static_cast<float>((v - lo) / (hi - lo)) * area.getHeight(); };

        // Grid and labels.
        g.setFont(13.0f);
        for (double v = lo; v <= hi + 0.5 * step; v += step)
        {
            const float y = yOf(v);
            g.setColour(kGrid);
            g.drawHorizontalLine(juce::roundToInt(y), area.getX(), area.getRight());
            g.setColour(kInk);
            g.drawText(juce::String(v, step < 1.0 ? 2 : 0), 0, juce::roundToInt(y) - 8,
                       static_cast<int>(left) - 8, 16, juce::Justification::centredRight);
        }
        for (double decade = std::pow(10.0, std::floor(std::log10(fLo))); decade <= fHi;
             decade *= 10.0)
            for (double m : {1.0, 2.0, 5.0})
            {
                const double f = decade * m;
                if (f < fLo || f > fHi)
                    continue;
                const float x = xOf(f);
                g.setColour(kGrid);
                g.drawVerticalLine(juce::roundToInt(x), area.getY(), area.getBottom());
                g.setColour(kInk);
                g.drawText(frequencyLabel(f), juce::roundToInt(x) - 30,
                           static_cast<int>(area.getBottom()) + 2, 60, 16,
                           juce::Justification::centred);
            }
        g.setColour(kInk);
        g.drawRect(area, 1.0f);
        g.setFont(juce::Font(15.0f, juce::Font::bold));
        g.drawText(series[k].name + " (" + series[k].unit + ")", static_cast<int>(left),
                   static_cast<int>(y0) - 22, 400, 20, juce::Justification::centredLeft);

        juce::Path path;
        for (std::size_t i = 0; i < points.size(); ++i)
        {
            const float x = xOf(points[i].freqHz), y = yOf(series[k].values[i]);
            if (i == 0)
                path.startNewSubPath(x, y);
            else
                path.lineTo(x, y);
        }
        g.saveState();
        g.reduceClipRegion(area.toNearestInt());
        g.setColour(series[k].colour);
        g.strokePath(path, juce::PathStrokeType(2.0f));
        g.restoreState();
    }
    g.setColour(kInk);
    g.setFont(14.0f);
    g.drawText("Frequency (Hz), log scale", 0, height - 24, width, 20,
               juce::Justification::centred);

    // Atomic: a temporary file beside the target, renamed over it when complete.
    AtomicOutput output(file);
    if (auto problem = output.begin(); problem.isNotEmpty())
        return problem;
    {
        juce::PNGImageFormat png;
        if (!png.writeImageToStream(image, *output.stream()))
            return "writing the PNG " + file.getFullPathName() + " failed";
    }
    return output.commit();
}

} // namespace kerf::cli
