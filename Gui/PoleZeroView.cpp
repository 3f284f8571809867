#include "PoleZeroView.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <numbers>

namespace kerf
{

namespace
{
// Our own palette (shared with the response display's ground and sand).
const juce::Colour kGround(0xff1d232a);
const juce::Colour kSand(0xffd8cbb0);
constexpr float kMarkHalfSize = 4.0f; // x arms and o radius, px

juce::String hzText(double hz)
{
    const double a = std::abs(hz);
    if (a >= 1000.0)
        return juce::String(hz / 1000.0, a >= 10000.0 ? 2 : 3) + " kHz";
    return juce::String(hz, a >= 100.0 ? 1 : 2) + " Hz";
}

/// A stage's type and frequency (chain positions differ from the editor's slot numbers).
juce::String stageName(const dsp::StageSpec& s)
{
    juce::String t(std::string(dsp::stageTypeName(s.type)));
    if (s.type != dsp::StageType::comb && s.type != dsp::StageType::echoCancel)
        t << " " << hzText(s.freqHz);
    return t;
}

/// Frequencies whose angles get a tick on the unit circle: 1, 2, 5 x powers of ten.
std::vector<double> tickFrequencies(double nyquist)
{
    std::vector<double> f;
    for (double decade = 10.0; decade < nyquist; decade *= 10.0)
        for (double m : {1.0, 2.0, 5.0})
            if (m * decade < nyquist)
                f.push_back(m * decade);
    return f;
}
} // namespace

std::vector<PoleZeroView::Mark>
PoleZeroView::groupRoots(const std::vector<std::complex<double>>& roots,
                         const std::vector<int>& stages, bool pole, double tolerance)
{
    std::vector<Mark> marks;
    std::vector<std::complex<double>> sums;
    for (std::size_t i = 0; i < roots.size(); ++i)
    {
        const auto z = roots[i];
        if (!std::isfinite(z.real()) || !std::isfinite(z.imag()))
            continue;
        std::size_t best = marks.size();
        double bestDistance = tolerance;
        for (std::size_t k = 0; k < marks.size(); ++k)
        {
            const double d = std::abs(marks[k].z - z);
            if (d <= bestDistance)
            {
                best = k;
                bestDistance = d;
            }
        }
        const int stage = i < stages.size() ? stages[i] : -1;
        if (best == marks.size())
        {
            marks.push_back({z, pole, 1, {stage}});
            sums.push_back(z);
            continue;
        }
        auto& m = marks[best];
        sums[best] += z;
        ++m.multiplicity;
        m.z = sums[best] / static_cast<double>(m.multiplicity);
        if (std::find(m.stages.begin(), m.stages.end(), stage) == m.stages.end())
            m.stages.push_back(stage);
    }
    return marks;
}

PoleZeroView::PoleZeroView()
{
    setOpaque(true);
    zoomButton.setClickingTogglesState(true);
    zoomButton.setComponentID("zplaneZoom");
    zoomButton.setTooltip("Shows the neighbourhood of z = 1 (0 Hz), where the roots of "
                          "low-frequency stages crowd; scaled to fit them");
    zoomButton.onClick = [this] { setZoomed(zoomButton.getToggleState()); };
    addAndMakeVisible(zoomButton);
    stageBox.setComponentID("zplaneStage");
    stageBox.setTooltip("Draws one stage's roots in full colour and dims the others");
    stageBox.onChange = [this] { setHighlightedStage(std::max(-1, stageBox.getSelectedId() - 2)); };
    addAndMakeVisible(stageBox);
    zoomButton.setTitle("Zoom near z = 1");
    stageBox.setTitle("Highlighted stage");
    setComponentID("poleZeroView");
    setTitle("Pole-zero display");
    setDescription("Poles and zeros of the enabled stages on the z-plane");
    setTooltip("Poles (x) and zeros (o) of the enabled stages; hover over a mark for its "
               "radius and angle");
}

PoleZeroView::~PoleZeroView()
{
    worker.stop();
    cancelPendingUpdate();
}

std::unique_ptr<juce::AccessibilityHandler> PoleZeroView::createAccessibilityHandler()
{
    return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
}

void PoleZeroView::setChain(const dsp::ChainSpec& newChain, double sampleRateHz)
{
    if (haveChain && sampleRateHz == sampleRate && newChain.numStages == chain.numStages &&
        std::equal(newChain.stages.begin(), newChain.stages.begin() + newChain.numStages,
                   chain.stages.begin()))
        return;
    chain = newChain;
    sampleRate = sampleRateHz;
    haveChain = true;
    dirty = true;
    // The stage list of the highlight box follows the chain's enabled stages.
    stageBox.clear(juce::dontSendNotification);
    stageBox.addItem("All stages", 1);
    for (int i = 0; i < chain.numStages; ++i)
        if (chain.stages[static_cast<std::size_t>(i)].enabled)
            stageBox.addItem(stageName(chain.stages[static_cast<std::size_t>(i)]), i + 2);
    if (highlight >= 0 && stageBox.indexOfItemId(highlight + 2) < 0)
        highlight = -1;
    stageBox.setSelectedId(highlight + 2, juce::dontSendNotification);
    if (isVisible())
        requestRoots();
    repaint();
}

void PoleZeroView::setHighlightedStage(int stageIndex)
{
    highlight = stageIndex;
    stageBox.setSelectedId(stageIndex + 2, juce::dontSendNotification);
    repaint();
}

void PoleZeroView::setZoomed(bool zoom)
{
    zoomNearOne = zoom;
    zoomButton.setToggleState(zoom, juce::dontSendNotification);
    chooseWindow();
    repaint();
}

void PoleZeroView::visibilityChanged()
{
    if (isVisible() && dirty)
        requestRoots();
}

void PoleZeroView::requestRoots()
{
    dirty = false;
    worker.request(Request{chain, sampleRate});
}

PoleZeroView::Result PoleZeroView::evaluate(const Request& request)
{
    const auto start = std::chrono::steady_clock::now();
    const auto& c = request.chain;
    cache.resize(static_cast<std::size_t>(c.numStages));
    Result result;
    std::vector<std::complex<double>> zeros, poles;
    std::vector<int> zeroStages, poleStages;
    for (int i = 0; i < c.numStages; ++i)
    {
        const auto& s = c.stages[static_cast<std::size_t>(i)];
        if (!s.enabled)
            continue;
        auto& cached = cache[static_cast<std::size_t>(i)];
        if (cached.sampleRateHz != request.sampleRateHz || !(cached.spec == s))
        {
            cached.roots = dsp::stagePolesZeros(s, request.sampleRateHz);
            cached.spec = s;
            cached.sampleRateHz = request.sampleRateHz;
            ++solves;
        }
        if (!cached.roots.listed)
        {
            result.model.notes.push_back(stageName(s) + ": " + juce::String(cached.roots.note));
            continue;
        }
        for (const auto& z : cached.roots.zeros)
        {
            zeros.push_back(z);
            zeroStages.push_back(i);
        }
        for (const auto& p : cached.roots.poles)
        {
            poles.push_back(p);
            poleStages.push_back(i);
        }
    }
    result.model.marks = groupRoots(zeros, zeroStages, false);
    auto p = groupRoots(poles, poleStages, true);
    result.model.marks.insert(result.model.marks.end(), p.begin(), p.end());
    result.ms =
        std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start).count();
    return result;
}

bool PoleZeroView::takeResult()
{
    auto taken = worker.take();
    if (!taken)
        return false;
    shownId = taken->first;
    auto* result = &taken->second;
    current = std::move(result->model);
    evaluationMs = result->ms;
    chooseWindow();
    repaint();
    return true;
}

void PoleZeroView::handleAsyncUpdate()
{
    takeResult();
}

bool PoleZeroView::waitForRoots(int timeoutMs)
{
    if (dirty)
        requestRoots();
    const auto wanted = worker.lastRequest();
    if (shownId == wanted)
        return true;
    if (!worker.waitFor(wanted, timeoutMs))
        return false;
    cancelPendingUpdate();
    return takeResult();
}

void PoleZeroView::chooseWindow()
{
    if (zoomNearOne)
    {
        // Every root within kZoomReach of z = 1 fits, z = 1 sits at four fifths of the width.
        double reach = 0.0;
        for (const auto& m : current.marks)
        {
            const double d = std::abs(m.z - 1.0);
            if (d <= kZoomReach)
                reach = std::max(reach, d);
        }
        halfSize = std::max(1.3 * reach, 1.0e-3);
        centre = {1.0 - 0.6 * halfSize, 0.0};
        return;
    }
    double far = 1.0;
    for (const auto& m : current.marks)
        far = std::max(far, std::abs(m.z));
    halfSize = std::min(std::max(1.2, 1.1 * far), 4.0);
    centre = {0.0, 0.0};
}

void PoleZeroView::resized()
{
    auto area = getLocalBounds();
    auto strip = area.removeFromTop(28).reduced(4, 3);
    zoomButton.setBounds(strip.removeFromLeft(92));
    strip.removeFromLeft(6);
    stageBox.setBounds(strip.removeFromLeft(200));
    area = area.reduced(8);
    // Text (legend, notes, readout) on the left when there is room beside the square.
    if (area.getWidth() >= area.getHeight() + 200)
        area.removeFromLeft(std::min(260, area.getWidth() - area.getHeight()));
    else
        area.removeFromBottom(16);
    const int side = std::min(area.getWidth(), area.getHeight());
    plot = side >= 8 ? area.withSizeKeepingCentre(side, side) : juce::Rectangle<int>();
}

juce::Point<float> PoleZeroView::pointForZ(std::complex<double> z) const noexcept
{
    const double scale = 0.5 * plot.getWidth() / halfSize;
    const double cx = plot.getX() + 0.5 * plot.getWidth(),
                 cy = plot.getY() + 0.5 * plot.getHeight();
    return {static_cast<float>(cx + (z.real() - centre.real()) * scale),
            static_cast<float>(cy - (z.imag() - centre.imag()) * scale)};
}

std::complex<double> PoleZeroView::zForPoint(juce::Point<float> p) const noexcept
{
    const double scale = 0.5 * std::max(1, plot.getWidth()) / halfSize;
    const double cx = plot.getX() + 0.5 * plot.getWidth(),
                 cy = plot.getY() + 0.5 * plot.getHeight();
    return {centre.real() + (p.x - cx) / scale, centre.imag() - (p.y - cy) / scale};
}

juce::Point<float> PoleZeroView::markCentre(std::complex<double> z) const noexcept
{
    const auto p = pointForZ(z);
    return {std::floor(p.x) + 0.5f, std::floor(p.y) + 0.5f};
}

const PoleZeroView::Mark* PoleZeroView::markNear(juce::Point<float> p, float maxDistancePx) const
{
    const Mark* best = nullptr;
    float bestDistance = maxDistancePx;
    for (const auto& m : current.marks)
    {
        const float d = pointForZ(m.z).getDistanceFrom(p);
        if (d <= bestDistance)
        {
            best = &m;
            bestDistance = d;
        }
    }
    return best;
}

juce::String PoleZeroView::readoutFor(const Mark& m) const
{
    juce::String t = m.pole ? "pole" : "zero";
    if (m.multiplicity > 1)
        t << " x" << m.multiplicity;
    const double r = std::abs(m.z);
    const double hz = std::arg(m.z) * sampleRate / (2.0 * std::numbers::pi);
    t << ": r = " << juce::String(r, 6) << ", angle " << (r > 0.0 ? hzText(hz) : "-") << " (";
    for (std::size_t i = 0; i < m.stages.size(); ++i)
    {
        const int k = m.stages[i];
        t << (i == 0 ? "" : ", ")
          << (k >= 0 && k < chain.numStages ? stageName(chain.stages[static_cast<std::size_t>(k)])
                                            : juce::String("stage"));
    }
    return t << ")";
}

void PoleZeroView::mouseMove(const juce::MouseEvent& e)
{
    hoverPoint = e.position;
    repaint();
}

void PoleZeroView::mouseExit(const juce::MouseEvent&)
{
    hoverPoint = {-1.0f, -1.0f};
    repaint();
}

void PoleZeroView::paintGrid(juce::Graphics& g)
{
    const auto plotF = plot.toFloat();
    g.setColour(kSand.withAlpha(0.25f));
    g.drawRect(plot);
    const auto origin = pointForZ({0.0, 0.0});
    const double scale = 0.5 * plot.getWidth() / halfSize;
    // Frequency ticks on the upper half of the unit circle (the angle of f is 2 pi f / fs),
    // labelled from Nyquist downwards wherever a label is at least 22 px of arc from the last.
    const double nyquist = 0.5 * sampleRate;
    auto freqs = tickFrequencies(nyquist);
    freqs.push_back(nyquist);
    std::vector<std::pair<juce::Point<float>, double>> labels;
    {
        juce::Graphics::ScopedSaveState save(g);
        g.reduceClipRegion(plot);
        // Axes through the origin, circles of radius 0.5 (faint) and 1 (the unit circle).
        g.setColour(kSand.withAlpha(0.28f));
        g.drawHorizontalLine(juce::roundToInt(origin.y - 0.5f), plotF.getX(), plotF.getRight());
        g.drawVerticalLine(juce::roundToInt(origin.x - 0.5f), plotF.getY(), plotF.getBottom());
        for (double r : {0.5, 1.0})
        {
            const float pr = static_cast<float>(r * scale);
            g.setColour(kSand.withAlpha(r == 1.0 ? 0.55f : 0.12f));
            g.drawEllipse(origin.x - pr, origin.y - pr, 2.0f * pr, 2.0f * pr,
                          r == 1.0 ? 1.2f : 1.0f);
        }
        double lastLabelled = 1.0e300;
        g.setColour(kSand.withAlpha(0.5f));
        for (auto it = freqs.rbegin(); it != freqs.rend(); ++it)
        {
            const double w = 2.0 * std::numbers::pi * *it / sampleRate;
            g.drawLine({pointForZ(std::polar(1.0 - 6.0 / scale, w)),
                        pointForZ(std::polar(1.0 + 6.0 / scale, w))},
                       1.0f);
            if (lastLabelled - w * scale >= 22.0)
            {
                lastLabelled = w * scale;
                labels.push_back({pointForZ(std::polar(1.0 + 16.0 / scale, w)), *it});
            }
        }
    }
    // Labels may lie just outside the plot; they stay below the button strip.
    juce::Graphics::ScopedSaveState save(g);
    g.reduceClipRegion(getLocalBounds().withTrimmedTop(28));
    g.setFont(10.0f);
    g.setColour(kSand.withAlpha(0.75f));
    for (const auto& [at, hz] : labels)
        g.drawText(hz >= 1000.0 ? juce::String(hz / 1000.0, 0) + "k" : juce::String(hz, 0),
                   juce::Rectangle<float>(36.0f, 12.0f).withCentre(at),
                   juce::Justification::centred);
}

void PoleZeroView::paintMark(juce::Graphics& g, const Mark& m) const
{
    const bool lit =
        highlight < 0 || std::find(m.stages.begin(), m.stages.end(), highlight) != m.stages.end();
    const auto colour = (m.pole ? poleColour() : zeroColour()).withAlpha(lit ? 1.0f : 0.3f);
    const auto c = markCentre(m.z);
    g.setColour(colour);
    const float h = kMarkHalfSize;
    if (m.pole)
    {
        g.drawLine(c.x - h, c.y - h, c.x + h, c.y + h, 2.0f);
        g.drawLine(c.x - h, c.y + h, c.x + h, c.y - h, 2.0f);
    }
    else
        g.drawEllipse(c.x - h, c.y - h, 2.0f * h, 2.0f * h, 2.0f);
    if (m.multiplicity > 1)
    {
        // Beside the mark, above right; a translucent tone so it never reads as a mark.
        g.setColour(colour.withMultipliedAlpha(0.85f));
        g.setFont(11.0f);
        g.drawText(m.label(), juce::Rectangle<float>(c.x + h + 1.0f, c.y - h - 11.0f, 30.0f, 11.0f),
                   juce::Justification::left);
    }
}

void PoleZeroView::paint(juce::Graphics& g)
{
    g.fillAll(kGround);
    if (plot.isEmpty())
        return;
    paintGrid(g);
    {
        juce::Graphics::ScopedSaveState save(g);
        g.reduceClipRegion(plot.expanded(2));
        // Dimmed marks first, so the highlighted stage's marks lie on top; zeros before
        // poles (an x inside an o stays readable).
        for (int pass = 0; pass < 2; ++pass)
            for (const auto& m : current.marks)
            {
                const bool lit = highlight < 0 || std::find(m.stages.begin(), m.stages.end(),
                                                            highlight) != m.stages.end();
                if (lit == (pass == 1))
                    paintMark(g, m);
            }
    }
    // Legend, notes and the hover readout.
    const bool beside = plot.getX() > 180;
    auto text = beside ? juce::Rectangle<int>(8, plot.getY(), plot.getX() - 16, plot.getHeight())
                       : juce::Rectangle<int>(plot.getX() + 4, plot.getY() + 2, plot.getWidth() - 8,
                                              plot.getHeight());
    g.setFont(11.0f);
    auto line = [&](const juce::String& s, juce::Colour c)
    {
        g.setColour(c);
        g.drawFittedText(s, text.removeFromTop(14), juce::Justification::left, 1, 0.8f);
    };
    line("x pole   o zero   n: multiplicity", kSand.withAlpha(0.8f));
    line(zoomNearOne ? "near z = 1, half-width " + juce::String(halfSize, 4)
                     : "whole plane; ticks: angle in Hz",
         kSand.withAlpha(0.6f));
    for (const auto& n : current.notes)
        line(n, kSand.withAlpha(0.7f));
    if (shownId != worker.lastRequest())
        line("computing roots...", kSand.withAlpha(0.6f));
    const Mark* m = hoverPoint.x >= 0.0f ? markNear(hoverPoint) : nullptr;
    const juce::String readout =
        m != nullptr ? readoutFor(*m)
                     : (hoverPoint.x >= 0.0f && plot.contains(hoverPoint.toInt())
                            ? "z = " + juce::String(zForPoint(hoverPoint).real(), 4) + " " +
                                  (zForPoint(hoverPoint).imag() < 0 ? "- " : "+ ") +
                                  juce::String(std::abs(zForPoint(hoverPoint).imag()), 4) + "j"
                            : juce::String("hover over a mark for its radius and angle"));
    g.setColour(kSand.withAlpha(0.9f));
    if (beside)
        g.drawFittedText(readout, text.removeFromTop(28), juce::Justification::topLeft, 2, 0.8f);
    else
        g.drawFittedText(readout, getLocalBounds().removeFromBottom(18).reduced(8, 1),
                         juce::Justification::left, 1, 0.8f);
}

} // namespace kerf
