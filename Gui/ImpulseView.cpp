#include "ImpulseView.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <limits>

namespace kerf
{

namespace
{
const juce::Colour kGround(0xff1d232a);
const juce::Colour kSand(0xffd8cbb0);

/// The smallest 1, 2 or 5 times a power of ten at or above x.
double niceCeil(double x)
{
    if (!(x > 0.0))
        return 1.0;
    const double decade = std::pow(10.0, std::floor(std::log10(x)));
    for (double m : {1.0, 2.0, 5.0, 10.0})
        if (m * decade >= x * (1.0 - 1e-12))
            return m * decade;
    return 10.0 * decade;
}

/// The smallest of 1, 1.2, 1.5, 2, 2.5, 3, 4, 5, 6, 8 times a power of ten at or above x (the
/// linear scale's top, so a peak fills most of the height).
double scaleCeil(double x)
{
    if (!(x > 0.0))
        return 1.0;
    const double decade = std::pow(10.0, std::floor(std::log10(x)));
    for (double m : {1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0})
        if (m * decade >= x * (1.0 - 1e-12))
            return m * decade;
    return 10.0 * decade;
}

/// A 1-2-5 step giving at most maxLines steps over span.
double niceStep(double span, int maxLines)
{
    return niceCeil(std::max(span / maxLines, 1e-12));
}
} // namespace

ImpulseView::ImpulseView()
{
    setOpaque(true);
    for (auto* b : {&linearButton, &dbButton})
    {
        b->setClickingTogglesState(true);
        b->setRadioGroupId(7311);
        addAndMakeVisible(b);
    }
    linearButton.setComponentID("impulseLinear");
    dbButton.setComponentID("impulseDb");
    linearButton.setTooltip("Amplitude of the impulse response, linear");
    dbButton.setTooltip("Level of the impulse response in dB: the largest |h| in each pixel "
                        "column (its envelope)");
    linearButton.setToggleState(true, juce::dontSendNotification);
    linearButton.onClick = [this]
    {
        if (linearButton.getToggleState())
            setDecibels(false);
    };
    dbButton.onClick = [this]
    {
        if (dbButton.getToggleState())
            setDecibels(true);
    };
    setComponentID("impulseView");
    setTitle("Impulse response display");
    setDescription("The chain's impulse response over time");
    setTooltip("The chain's response to a single unit sample, output gain included");
}

ImpulseView::~ImpulseView()
{
    worker.stop();
    cancelPendingUpdate();
}

std::unique_ptr<juce::AccessibilityHandler> ImpulseView::createAccessibilityHandler()
{
    return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
}

void ImpulseView::setChain(const dsp::ChainSpec& newChain, double sampleRateHz, double outputGainDb)
{
    if (haveChain && sampleRateHz == sampleRate && outputGainDb == gainDb &&
        newChain.numStages == chain.numStages &&
        std::equal(newChain.stages.begin(), newChain.stages.begin() + newChain.numStages,
                   chain.stages.begin()))
        return;
    chain = newChain;
    sampleRate = sampleRateHz;
    gainDb = outputGainDb;
    haveChain = true;
    dirty = true;
    if (isVisible())
        requestTrace();
    repaint();
}

void ImpulseView::setDecibels(bool db)
{
    showDb = db;
    (db ? dbButton : linearButton).setToggleState(true, juce::dontSendNotification);
    repaint();
}

void ImpulseView::visibilityChanged()
{
    if (isVisible() && dirty)
        requestTrace();
}

double ImpulseView::durationSeconds() const noexcept
{
    return h.size() > 1 ? static_cast<double>(h.size() - 1) / shownRate : kMinSeconds;
}

void ImpulseView::requestTrace()
{
    dirty = false;
    worker.request(Request{chain, sampleRate, gainDb});
}

ImpulseView::Result ImpulseView::render(const Request& request)
{
    const auto start = std::chrono::steady_clock::now();
    Result r;
    r.sampleRateHz = request.sampleRateHz;
    r.tail = dsp::chainTailSeconds(request.chain, request.sampleRateHz);
    const double seconds = std::clamp(1.1 * r.tail, kMinSeconds, kMaxSeconds);
    const int length = std::max(2, static_cast<int>(std::ceil(seconds * request.sampleRateHz)) + 1);
    r.h = dsp::impulseResponse(request.chain, request.sampleRateHz, length);
    const double gain = std::pow(10.0, request.gainDb / 20.0);
    for (auto& v : r.h)
    {
        v *= gain;
        if (std::isfinite(v))
            r.peak = std::max(r.peak, std::abs(v));
    }
    r.ms =
        std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start).count();
    return r;
}

bool ImpulseView::takeResult()
{
    auto taken = worker.take();
    if (!taken)
        return false;
    shownId = taken->first;
    auto* r = &taken->second;
    h = std::move(r->h);
    shownRate = r->sampleRateHz;
    tail = r->tail;
    renderMs = r->ms;
    linearRange = scaleCeil(1.02 * r->peak);
    linearStep = niceStep(2.0 * linearRange, 8);
    topDb = r->peak > 0.0 ? 10.0 * std::ceil(20.0 * std::log10(r->peak) / 10.0 + 1e-9) : 0.0;
    ++renders;
    buildColumns();
    repaint();
    return true;
}

void ImpulseView::handleAsyncUpdate()
{
    takeResult();
}

bool ImpulseView::waitForTrace(int timeoutMs)
{
    if (dirty)
        requestTrace();
    const auto wanted = worker.lastRequest();
    if (shownId == wanted)
        return true;
    if (!worker.waitFor(wanted, timeoutMs))
        return false;
    cancelPendingUpdate();
    return takeResult();
}

void ImpulseView::buildColumns()
{
    cols.clear();
    const int width = plot.getWidth();
    const int n = static_cast<int>(h.size());
    if (width < 1 || n < 2)
        return;
    auto at = [&](double u)
    {
        // The trace between samples: linear interpolation (what a connected line shows).
        u = std::clamp(u, 0.0, static_cast<double>(n - 1));
        const int i = std::min(static_cast<int>(std::floor(u)), n - 2);
        const double f = u - i;
        const double a = h[static_cast<std::size_t>(i)], b = h[static_cast<std::size_t>(i + 1)];
        return a + (b - a) * f;
    };
    const double floorDb = topDb - kDbSpan - 20.0;
    cols.resize(static_cast<std::size_t>(width));
    for (int c = 0; c < width; ++c)
    {
        const double ua = timeForX(plot.getX() + c) * shownRate;
        const double ub = timeForX(plot.getX() + c + 1) * shownRate;
        double lo = std::numeric_limits<double>::infinity(), hi = -lo;
        auto take = [&](double v)
        {
            if (std::isfinite(v))
            {
                lo = std::min(lo, v);
                hi = std::max(hi, v);
            }
        };
        take(at(ua));
        take(at(ub));
        for (int i = std::max(0, static_cast<int>(std::floor(ua)) + 1);
             i < n && static_cast<double>(i) < ub; ++i)
            take(h[static_cast<std::size_t>(i)]);
        if (lo > hi)
            lo = hi = 0.0; // nothing finite here (a runaway is silenced by the processor)
        const double m = std::max(std::abs(lo), std::abs(hi));
        cols[static_cast<std::size_t>(c)] = {
            lo, hi, m > 0.0 ? std::max(20.0 * std::log10(m), floorDb) : floorDb};
    }
}

void ImpulseView::resized()
{
    auto area = getLocalBounds();
    auto strip = area.removeFromTop(28).reduced(4, 3);
    linearButton.setBounds(strip.removeFromLeft(70));
    strip.removeFromLeft(2);
    dbButton.setBounds(strip.removeFromLeft(96));
    plot = area.withTrimmedLeft(52).withTrimmedRight(12).withTrimmedTop(10).withTrimmedBottom(20);
    if (plot.getWidth() < 2 || plot.getHeight() < 2)
        plot = {};
    buildColumns();
}

float ImpulseView::xForTime(double seconds) const noexcept
{
    return static_cast<float>(plot.getX() + seconds / durationSeconds() * plot.getWidth());
}

double ImpulseView::timeForX(double x) const noexcept
{
    return (x - plot.getX()) / std::max(1, plot.getWidth()) * durationSeconds();
}

float ImpulseView::yForValue(double value) const noexcept
{
    const double t = (linearRange - value) / (2.0 * linearRange);
    return static_cast<float>(plot.getY() + t * plot.getHeight());
}

float ImpulseView::yForDb(double db) const noexcept
{
    const double t = (topDb - db) / kDbSpan;
    return static_cast<float>(plot.getY() + t * plot.getHeight());
}

void ImpulseView::paintGrid(juce::Graphics& g)
{
    g.setFont(11.0f);
    const float top = static_cast<float>(plot.getY()),
                bottom = static_cast<float>(plot.getBottom());
    const double ms = 1000.0 * durationSeconds();
    const double step = niceStep(ms, 8);
    for (double t = 0.0; t <= ms + 1e-9 * step; t += step)
    {
        const int x = static_cast<int>(std::floor(xForTime(t / 1000.0)));
        g.setColour(kSand.withAlpha(0.14f));
        g.drawVerticalLine(x, top, bottom);
        g.setColour(kSand.withAlpha(0.7f));
        g.drawText(juce::String(t, step < 1.0 ? (step < 0.1 ? 2 : 1) : 0), x - 24,
                   plot.getBottom() + 3, 48, 14, juce::Justification::centred);
    }
    g.setColour(kSand.withAlpha(0.85f));
    g.drawText("ms", 4, plot.getBottom() + 3, 24, 14, juce::Justification::left);
    const double vStep = showDb ? 20.0 : linearStep;
    const double lo = showDb ? topDb - kDbSpan : -linearRange, hi = showDb ? topDb : linearRange;
    for (double v = std::ceil(lo / vStep - 1e-9) * vStep; v <= hi + 1e-9 * vStep; v += vStep)
    {
        const int y = static_cast<int>(std::floor(showDb ? yForDb(v) : yForValue(v)));
        const bool zero = !showDb && std::abs(v) < 1e-9 * vStep;
        g.setColour(kSand.withAlpha(zero ? 0.4f : 0.13f));
        g.drawHorizontalLine(y, static_cast<float>(plot.getX()),
                             static_cast<float>(plot.getRight()));
        g.setColour(kSand.withAlpha(0.7f));
        const int decimals = showDb ? 0 : (vStep < 0.01 ? 3 : vStep < 0.1 ? 2 : vStep < 1 ? 1 : 0);
        g.drawText(juce::String(v, decimals), 0, y - 7, plot.getX() - 4, 14,
                   juce::Justification::right);
    }
}

void ImpulseView::paint(juce::Graphics& g)
{
    g.fillAll(kGround);
    if (plot.isEmpty())
        return;
    paintGrid(g);
    g.setFont(11.0f);
    juce::String what = showDb ? "impulse response, dB of |h| (envelope)" : "impulse response h[n]";
    what << ", " << juce::String(h.size()) << " samples";
    if (shownId != worker.lastRequest())
        what << " (rendering...)";
    if (1.1 * tail > kMaxSeconds)
        what << "; first " << juce::String(kMaxSeconds, 0) << " s of a " << juce::String(tail, 1)
             << " s tail";
    g.setColour(traceColour().withAlpha(0.9f));
    g.drawText(what, plot.getX() + 6, plot.getY() + 2, plot.getWidth() - 12, 13,
               juce::Justification::left);
    juce::Graphics::ScopedSaveState save(g);
    g.reduceClipRegion(plot);
    const float clipTop = static_cast<float>(plot.getY() - 2);
    const float clipBottom = static_cast<float>(plot.getBottom() + 2);
    int previousRow = -1;
    for (std::size_t c = 0; c < cols.size(); ++c)
    {
        const int x = plot.getX() + static_cast<int>(c);
        if (showDb)
        {
            // The envelope: a faint fill below, a line joined to the previous column on top.
            const int row =
                juce::roundToInt(std::clamp(yForDb(cols[c].peakDb), clipTop, clipBottom));
            g.setColour(traceColour().withAlpha(0.22f));
            g.fillRect(x, row + 1, 1, plot.getBottom() - row);
            const int r0 = previousRow < 0 ? row : std::min(row, previousRow);
            const int r1 = previousRow < 0 ? row : std::max(row, previousRow);
            g.setColour(traceColour());
            g.fillRect(x, r0 - 1, 1, r1 - r0 + 2);
            previousRow = row;
            continue;
        }
        // Linear: the rows from the column's highest to its lowest value, at least two thick.
        const int r0 =
            juce::roundToInt(std::clamp(yForValue(cols[c].high), clipTop, clipBottom)) - 1;
        const int r1 =
            std::max(juce::roundToInt(std::clamp(yForValue(cols[c].low), clipTop, clipBottom)), r0);
        g.setColour(traceColour());
        g.fillRect(x, r0, 1, r1 - r0 + 1);
    }
}

} // namespace kerf
