#include "ResponseView.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <limits>

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

// Our own palette: deep slate ground, sand grid and text, one warm curve, muted stage tones.
const juce::Colour kGround(0xff1d232a);
const juce::Colour kSand(0xffd8cbb0);
const juce::Colour kStageTones[] = {juce::Colour(0xff5fb3a8), juce::Colour(0xffa08cc8),
                                    juce::Colour(0xffb5c46a), juce::Colour(0xffd07a8c),
                                    juce::Colour(0xff7aa6d8), juce::Colour(0xffc9a04a)};

constexpr int kMinPointsPerColumn = 4;      // for smooth curves
constexpr int kMaxPointsPerColumn = 4096;   // bound on the work per column
constexpr double kPointsPerFinePeriod = 16; // samples per period of the longest delay
constexpr double kFloorDb = -400.0;         // exact nulls (-inf dB) are drawn at the floor

juce::String frequencyText(double hz)
{
    if (hz >= 1000.0)
        return juce::String(hz / 1000.0, hz >= 10000.0 || std::fmod(hz, 1000.0) == 0.0 ? 0 : 1) +
               " kHz";
    return juce::String(hz, 0) + " Hz";
}

juce::String stageLabel(const dsp::StageSpec& s)
{
    const juce::String name(std::string(dsp::stageTypeName(s.type)));
    switch (s.type)
    {
    case dsp::StageType::peaking:
    case dsp::StageType::lowShelf:
    case dsp::StageType::highShelf:
    case dsp::StageType::tilt:
        return name + " " + frequencyText(s.freqHz) + " " + (s.gainDb >= 0 ? "+" : "") +
               juce::String(s.gainDb, 1) + " dB";
    case dsp::StageType::comb:
        return name + " " +
               (s.comb.pitchHz > 0 ? frequencyText(s.comb.pitchHz)
                                   : juce::String(s.comb.delayMs, 2) + " ms");
    case dsp::StageType::echoCancel:
        return name + " (" + juce::String(s.echo.numReflections) + " reflections)";
    default:
        return name + " " + frequencyText(s.freqHz);
    }
}

/// A step of 1, 2 or 5 (or the listed angles) times a power of ten giving at most maxLines.
double niceStep(double span, int maxLines, bool degrees)
{
    if (degrees)
    {
        for (double step : {15.0, 30.0, 45.0, 90.0, 180.0, 360.0, 720.0, 1440.0, 2880.0})
            if (span / step <= maxLines)
                return step;
        return 360.0 * std::ceil(span / (360.0 * maxLines));
    }
    const double raw = std::max(span / maxLines, 1e-9);
    const double decade = std::pow(10.0, std::floor(std::log10(raw)));
    for (double m : {1.0, 2.0, 5.0, 10.0})
        if (m * decade >= raw)
            return m * decade;
    return 10.0 * decade;
}
} // namespace

ResponseView::ResponseView()
{
    setOpaque(true);
    auto modeButton = [this](juce::TextButton& b, Mode m, const char* id, const char* tip)
    {
        b.setClickingTogglesState(true);
        b.setRadioGroupId(7301);
        b.setComponentID(id);
        b.setTooltip(tip);
        b.onClick = [this, &b, m]
        {
            if (b.getToggleState())
                setMode(m);
        };
        addAndMakeVisible(b);
    };
    modeButton(magnitudeButton, Mode::magnitude, "viewMagnitude",
               "Magnitude of the whole chain in dB");
    modeButton(phaseButton, Mode::phase, "viewPhase",
               "Phase of the whole chain in degrees, unwrapped upwards from 1 Hz");
    modeButton(delayButton, Mode::groupDelay, "viewGroupDelay",
               "Group delay of the whole chain in milliseconds");
    magnitudeButton.setToggleState(true, juce::dontSendNotification);
    stagesButton.setClickingTogglesState(true);
    stagesButton.setComponentID("viewStages");
    stagesButton.setTooltip("Also draws each enabled stage's own contribution");
    stagesButton.onClick = [this] { setShowStages(stagesButton.getToggleState()); };
    addAndMakeVisible(stagesButton);
    rangeButton.setComponentID("viewRange");
    rangeButton.setTooltip("Magnitude scale: +-12, +-24 or +-48 dB");
    rangeButton.onClick = [this]
    {
        setMagnitudeRangeDb(magnitudeHalfRange == 12.0   ? 24.0
                            : magnitudeHalfRange == 24.0 ? 48.0
                                                         : 12.0);
    };
    addAndMakeVisible(rangeButton);
    pathBox.addItemList({"Left", "Right", "Mid", "Side"}, 1);
    pathBox.setSelectedId(1, juce::dontSendNotification);
    pathBox.setComponentID("viewPath");
    pathBox.setTitle("Channel path");
    rangeButton.setTitle("Magnitude scale");
    pathBox.setTooltip("Which path through the stereo chain the curve follows (they differ "
                       "only when a stage works on one channel, or on mid or side)");
    pathBox.onChange = [this]
    { setChannelView(static_cast<dsp::ChannelView>(pathBox.getSelectedId() - 1)); };
    addAndMakeVisible(pathBox);
    addChildComponent(handles);
    setComponentID("responseView");
    setTitle("Response display");
    setDescription("The chain's response computed from its system function");
    setTooltip("What the chain does to each frequency, computed from its system function");
    worker = std::thread([this] { workerLoop(); });
}

ResponseView::~ResponseView()
{
    {
        const std::lock_guard<std::mutex> lock(workMutex);
        quitting = true;
    }
    workReady.notify_all();
    worker.join();
    cancelPendingUpdate();
}

void ResponseView::setChain(const dsp::ChainSpec& newChain, double sampleRateHz,
                            double outputGainDb)
{
    if (haveChain && sampleRateHz == sampleRate && outputGainDb == gainDb &&
        sameChain(newChain, chain))
        return;
    chain = newChain;
    sampleRate = sampleRateHz;
    gainDb = outputGainDb;
    haveChain = true;
    handles.repaint();
    evaluate();
}

void ResponseView::attachParameters(juce::AudioProcessorValueTreeState& state)
{
    handles.attach(state);
    handles.setVisible(currentMode == Mode::magnitude);
}

void ResponseView::setMode(Mode newMode)
{
    if (newMode == currentMode)
        return;
    currentMode = newMode;
    auto& button = newMode == Mode::magnitude ? magnitudeButton
                   : newMode == Mode::phase   ? phaseButton
                                              : delayButton;
    button.setToggleState(true, juce::dontSendNotification);
    rangeButton.setEnabled(newMode == Mode::magnitude);
    handles.setVisible(handles.attached() && newMode == Mode::magnitude);
    evaluate();
}

void ResponseView::setShowStages(bool show)
{
    if (show == showStages)
        return;
    showStages = show;
    stagesButton.setToggleState(show, juce::dontSendNotification);
    evaluate();
}

void ResponseView::setChannelView(dsp::ChannelView view)
{
    if (view == pathView)
        return;
    pathView = view;
    pathBox.setSelectedId(static_cast<int>(view) + 1, juce::dontSendNotification);
    evaluate();
}

void ResponseView::setMagnitudeRangeDb(double halfRangeDb)
{
    magnitudeHalfRange = halfRangeDb;
    rangeButton.setButtonText("+-" + juce::String(halfRangeDb, 0) + " dB");
    chooseRange();
    repaint();
}

void ResponseView::resized()
{
    layoutControls();
    handles.setBounds(getLocalBounds());
    evaluate();
}

std::unique_ptr<juce::AccessibilityHandler> ResponseView::createAccessibilityHandler()
{
    return std::make_unique<juce::AccessibilityHandler>(*this, juce::AccessibilityRole::group);
}

void ResponseView::layoutControls()
{
    auto area = getLocalBounds();
    auto strip = area.removeFromTop(28).reduced(4, 3);
    for (auto* b : {&magnitudeButton, &phaseButton, &delayButton})
    {
        b->setBounds(strip.removeFromLeft(b == &delayButton ? 92 : 78));
        strip.removeFromLeft(2);
    }
    strip.removeFromLeft(10);
    stagesButton.setBounds(strip.removeFromLeft(64));
    strip.removeFromLeft(6);
    rangeButton.setBounds(strip.removeFromLeft(70));
    pathBox.setBounds(strip.removeFromRight(80));
    // Room for the value labels on the left and the frequency labels below.
    plot = area.withTrimmedLeft(48).withTrimmedRight(10).withTrimmedTop(10).withTrimmedBottom(20);
    if (plot.getWidth() < 2 || plot.getHeight() < 2)
        plot = {};
}

double ResponseView::highHz() const noexcept
{
    return std::min(0.5 * sampleRate, 24000.0);
}

float ResponseView::xForFrequency(double freqHz) const noexcept
{
    const double t = std::log(freqHz / kLowHz) / std::log(highHz() / kLowHz);
    return static_cast<float>(plot.getX() + t * plot.getWidth());
}

double ResponseView::frequencyForX(double x) const noexcept
{
    const double t = (x - plot.getX()) / std::max(1, plot.getWidth());
    return kLowHz * std::pow(highHz() / kLowHz, t);
}

float ResponseView::yForValue(double value) const noexcept
{
    const double t = (rangeHigh - value) / (rangeHigh - rangeLow);
    return static_cast<float>(plot.getY() + t * plot.getHeight());
}

float ResponseView::yForDb(double db) const noexcept
{
    const double t = (magnitudeHalfRange - db) / (2.0 * magnitudeHalfRange);
    return static_cast<float>(plot.getY() + t * plot.getHeight());
}

double ResponseView::dbForY(double y) const noexcept
{
    const double t = (y - plot.getY()) / std::max(1, plot.getHeight());
    return magnitudeHalfRange - t * 2.0 * magnitudeHalfRange;
}

namespace
{
/// The dense frequency grid: column c spans freqs[columnStart[c]] .. freqs[columnStart[c + 1]]
/// (neighbours share their edge); leadIn lies below the axis so phase unwraps from 1 Hz.
struct Grid
{
    std::vector<double> freqs, leadIn;
    std::vector<int> columnStart;
};

Grid makeGrid(const dsp::ChainSpec& chain, double fs, int width)
{
    Grid grid;
    if (width < 2)
        return grid;
    const double low = ResponseView::kLowHz, high = std::min(0.5 * fs, 24000.0);
    auto freqAt = [&](double column) { return low * std::pow(high / low, column / width); };
    // The delays that make fine structure: sampled at 16 points per period of the longest,
    // plus every half period of each (a single comb's or reflection's exact peaks and notches).
    double longestDelay = 0.0;
    std::vector<double> halfPeriodsHz;
    auto addDelay = [&](double samples)
    {
        if (samples > 0.0)
        {
            longestDelay = std::max(longestDelay, samples);
            halfPeriodsHz.push_back(0.5 * fs / samples);
        }
    };
    for (int i = 0; i < chain.numStages; ++i)
    {
        const auto& s = chain.stages[static_cast<std::size_t>(i)];
        if (!s.enabled)
            continue;
        if (s.type == dsp::StageType::comb)
            addDelay(dsp::combLineDelaySamples(dsp::clampCombSettings(s.comb, fs), fs));
        else if (s.type == dsp::StageType::echoCancel)
            for (int k = 0; k < s.echo.numReflections; ++k)
                addDelay(s.echo.reflections[static_cast<std::size_t>(k)].delayMs * fs / 1000.0);
    }
    const double step = longestDelay > 0.0 ? fs / longestDelay / kPointsPerFinePeriod : 1.0e300;
    std::vector<double> local;
    for (int c = 0; c < width; ++c)
    {
        const double fa = freqAt(c), fb = freqAt(c + 1);
        const int n = static_cast<int>(std::clamp(
            std::ceil((fb - fa) / step), double(kMinPointsPerColumn), double(kMaxPointsPerColumn)));
        local.clear();
        for (int i = 0; i < n; ++i)
            local.push_back(fa + (fb - fa) * i / n);
        for (double hp : halfPeriodsHz)
            for (double k = std::floor(fa / hp) + 1.0;
                 k * hp < fb && static_cast<int>(local.size()) < 2 * kMaxPointsPerColumn; k += 1.0)
                local.push_back(k * hp);
        std::sort(local.begin(), local.end());
        grid.columnStart.push_back(static_cast<int>(grid.freqs.size()));
        grid.freqs.insert(grid.freqs.end(), local.begin(), local.end());
    }
    grid.freqs.push_back(freqAt(width));
    grid.columnStart.push_back(static_cast<int>(grid.freqs.size()) - 1);
    const double leadStep = std::min(0.5, step);
    for (double f = 1.0; f < low; f += leadStep)
        grid.leadIn.push_back(f);
    return grid;
}

/// Each column's lowest and highest value of one chain along one path.
std::vector<ResponseView::Column> evaluateColumns(const Grid& grid, const dsp::ChainSpec& c,
                                                  double fs, ResponseView::Mode mode,
                                                  dsp::ChannelView view, double gainDb)
{
    const auto n = grid.freqs.size();
    std::vector<double> values(n);
    if (mode == ResponseView::Mode::magnitude)
    {
        dsp::chainMagnitudeDb(c, fs, grid.freqs.data(), values.data(), static_cast<int>(n), view);
        for (auto& v : values)
            v = std::max(v + gainDb, kFloorDb); // NaN and -inf to the floor
    }
    else
    {
        std::vector<double> freqs(grid.leadIn);
        freqs.insert(freqs.end(), grid.freqs.begin(), grid.freqs.end());
        const auto points = dsp::chainResponse(c, fs, freqs, view);
        for (std::size_t i = 0; i < n; ++i)
        {
            const auto& p = points[grid.leadIn.size() + i];
            values[i] =
                mode == ResponseView::Mode::phase ? p.phaseDeg : p.groupDelaySamples * 1000.0 / fs;
        }
    }
    std::vector<ResponseView::Column> out(grid.columnStart.empty() ? 0
                                                                   : grid.columnStart.size() - 1);
    for (std::size_t col = 0; col < out.size(); ++col)
    {
        double lo = std::numeric_limits<double>::infinity(), hi = -lo;
        for (int i = grid.columnStart[col]; i <= grid.columnStart[col + 1]; ++i)
        {
            const double v = values[static_cast<std::size_t>(i)];
            if (std::isfinite(v))
            {
                lo = std::min(lo, v);
                hi = std::max(hi, v);
            }
        }
        if (lo > hi)
            lo = hi = std::numeric_limits<double>::quiet_NaN();
        out[col] = {lo, hi};
    }
    return out;
}
} // namespace

ResponseView::Result ResponseView::compute(const Request& r)
{
    const auto start = std::chrono::steady_clock::now();
    Result result;
    result.id = r.id;
    result.mode = r.mode;
    result.view = r.view;
    const Grid grid = makeGrid(r.chain, r.sampleRate, r.width);
    result.points = static_cast<int>(grid.freqs.size());
    if (!grid.freqs.empty())
    {
        result.total = evaluateColumns(grid, r.chain, r.sampleRate, r.mode, r.view, r.gainDb);
        if (r.stages)
        {
            const bool product = dsp::viewIsProduct(r.chain, r.view);
            for (int i = 0; i < r.chain.numStages; ++i)
            {
                const auto& s = r.chain.stages[static_cast<std::size_t>(i)];
                if (!s.enabled || (product && !dsp::stageInView(s.channels, r.view)))
                    continue;
                dsp::ChainSpec one;
                one.push(s);
                const auto tone = kStageTones[result.stages.size() % std::size(kStageTones)];
                result.stages.push_back(
                    {stageLabel(s), tone,
                     evaluateColumns(grid, one, r.sampleRate, r.mode, r.view, 0.0)});
            }
        }
    }
    result.ms =
        std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start).count();
    return result;
}

void ResponseView::evaluate()
{
    Request r;
    r.chain = chain;
    r.sampleRate = sampleRate;
    r.gainDb = gainDb;
    r.mode = currentMode;
    r.view = pathView;
    r.stages = showStages;
    r.width = plot.getWidth();
    {
        const std::lock_guard<std::mutex> lock(workMutex);
        r.id = ++lastRequestId;
        pending = std::move(r); // replaces an older request the worker has not started
    }
    workReady.notify_one();
}

void ResponseView::workerLoop()
{
    std::unique_lock<std::mutex> lock(workMutex);
    for (;;)
    {
        workReady.wait(lock, [this] { return quitting || pending.has_value(); });
        if (quitting)
            return;
        const Request r = std::move(*pending);
        pending.reset();
        lock.unlock();
        Result result = compute(r);
        evaluations.fetch_add(1);
        lock.lock();
        finished = std::move(result);
        resultReady.notify_all();
        triggerAsyncUpdate(); // posts a message; handleAsyncUpdate takes the result
    }
}

bool ResponseView::takeResult()
{
    std::optional<Result> result;
    {
        const std::lock_guard<std::mutex> lock(workMutex);
        result.swap(finished);
    }
    // A result for a mode or path the user has left is dropped: the newer one is on its way.
    if (!result || result->mode != currentMode || result->view != pathView)
        return false;
    shownId = result->id;
    total = std::move(result->total);
    stageCurves = std::move(result->stages);
    points = result->points;
    evaluationMs = result->ms;
    chooseRange();
    repaint();
    return true;
}

void ResponseView::handleAsyncUpdate()
{
    takeResult();
}

bool ResponseView::waitForCurve(int timeoutMs)
{
    std::uint64_t wanted = 0;
    {
        std::unique_lock<std::mutex> lock(workMutex);
        wanted = lastRequestId;
        if (shownId == wanted)
            return true;
        const bool done = resultReady.wait_for(lock, std::chrono::milliseconds(timeoutMs),
                                               [&] { return finished && finished->id == wanted; });
        if (!done)
            return false;
    }
    cancelPendingUpdate();
    return takeResult();
}

void ResponseView::chooseRange()
{
    if (currentMode == Mode::magnitude)
    {
        rangeLow = -magnitudeHalfRange;
        rangeHigh = magnitudeHalfRange;
        rangeStep = magnitudeHalfRange / 4.0;
        return;
    }
    std::vector<double> v;
    auto collect = [&v](const std::vector<Column>& cols)
    {
        for (const auto& c : cols)
            if (std::isfinite(c.low))
            {
                v.push_back(c.low);
                v.push_back(c.high);
            }
    };
    collect(total);
    for (const auto& s : stageCurves)
        collect(s.columns);
    double lo = 0.0, hi = 0.0;
    if (!v.empty())
    {
        std::sort(v.begin(), v.end());
        if (currentMode == Mode::phase)
        {
            lo = v.front();
            hi = v.back();
        }
        else
        {
            // Group delay spikes at near-nulls would flatten everything else: the scale
            // spans the 1st to 99th percentile and 0 ms; what lies beyond is drawn at the edge.
            lo = std::min(0.0, v[v.size() / 100]);
            hi = std::max(0.0, v[v.size() - 1 - v.size() / 100]);
        }
    }
    const bool degrees = currentMode == Mode::phase;
    const double minSpan = degrees ? 90.0 : 0.1;
    if (hi - lo < minSpan)
    {
        const double mid = 0.5 * (hi + lo);
        lo = mid - 0.5 * minSpan;
        hi = mid + 0.5 * minSpan;
    }
    rangeStep = niceStep(hi - lo, 8, degrees);
    rangeLow = std::floor(lo / rangeStep) * rangeStep;
    rangeHigh = std::ceil(hi / rangeStep) * rangeStep;
    if (rangeHigh - rangeLow < rangeStep)
        rangeHigh = rangeLow + rangeStep;
}

void ResponseView::paintGrid(juce::Graphics& g)
{
    g.setFont(11.0f);
    const float top = static_cast<float>(plot.getY());
    const float bottom = static_cast<float>(plot.getBottom());
    for (double f : {20.0, 50.0, 100.0, 200.0, 500.0, 1000.0, 2000.0, 5000.0, 10000.0, 20000.0})
    {
        if (f > highHz())
            break;
        const int x = static_cast<int>(std::floor(xForFrequency(f)));
        g.setColour(kSand.withAlpha(0.16f));
        g.drawVerticalLine(x, top, bottom);
        g.setColour(kSand.withAlpha(0.7f));
        const auto label = f >= 1000.0 ? juce::String(f / 1000.0, 0) + "k" : juce::String(f, 0);
        g.drawText(label, x - 20, plot.getBottom() + 3, 40, 14, juce::Justification::centred);
    }
    for (int i = 0;; ++i)
    {
        const double v = rangeLow + i * rangeStep;
        if (v > rangeHigh + 1e-9 * rangeStep)
            break;
        const int y = static_cast<int>(std::floor(yForValue(v)));
        g.setColour(kSand.withAlpha(std::abs(v) < 1e-9 * rangeStep ? 0.38f : 0.13f));
        g.drawHorizontalLine(y, static_cast<float>(plot.getX()),
                             static_cast<float>(plot.getRight()));
        g.setColour(kSand.withAlpha(0.7f));
        const int decimals =
            currentMode == Mode::groupDelay && rangeStep < 1.0 ? (rangeStep < 0.1 ? 2 : 1) : 0;
        g.drawText((v > 0 ? "+" : "") + juce::String(v, decimals), 0, y - 7, plot.getX() - 4, 14,
                   juce::Justification::right);
    }
    g.setColour(kSand.withAlpha(0.85f));
    g.drawText("Hz", 4, plot.getBottom() + 3, 24, 14, juce::Justification::left);
}

void ResponseView::paintColumns(juce::Graphics& g, const std::vector<Column>& cols,
                                juce::Colour colour, float minThickness) const
{
    // One filled run of rows per pixel column, from the column's highest to its lowest value:
    // a smooth curve is a line minThickness rows thick, fine structure a band.
    g.setColour(colour);
    const float clipTop = static_cast<float>(plot.getY() - 2);
    const float clipBottom = static_cast<float>(plot.getBottom() + 2);
    for (std::size_t c = 0; c < cols.size(); ++c)
    {
        if (!std::isfinite(cols[c].low))
            continue;
        const float yTop = std::clamp(yForValue(cols[c].high), clipTop, clipBottom);
        const float yBottom = std::clamp(yForValue(cols[c].low), clipTop, clipBottom);
        const int half = static_cast<int>(minThickness) / 2;
        const int r0 = juce::roundToInt(yTop) - half;
        const int r1 =
            std::max(juce::roundToInt(yBottom) + (static_cast<int>(minThickness) - half) - 1, r0);
        g.fillRect(plot.getX() + static_cast<int>(c), r0, 1, r1 - r0 + 1);
    }
}

void ResponseView::paint(juce::Graphics& g)
{
    g.fillAll(kGround);
    if (plot.isEmpty())
        return;
    paintGrid(g);
    // Legend first, so the curves are drawn over it: what the curve is, and the stage curves' names
    // in their colours.
    g.setFont(11.0f);
    int y = plot.getY() + 2;
    auto line = [&](const juce::String& text, juce::Colour colour)
    {
        g.setColour(colour);
        g.drawText(text, plot.getX() + 6, y, 260, 13, juce::Justification::left);
        y += 13;
    };
    juce::String what = currentMode == Mode::magnitude ? "magnitude in dB"
                        : currentMode == Mode::phase   ? "phase in degrees (unwrapped)"
                                                       : "group delay in ms";
    what << " of H(z), " << pathBox.getText().toLowerCase() << " path";
    if (currentMode == Mode::magnitude && gainDb != 0.0)
        what << ", output gain " << (gainDb > 0 ? "+" : "") << juce::String(gainDb, 1) << " dB";
    line(what, curveColour().withAlpha(0.9f));
    for (const auto& s : stageCurves)
        line(s.label, s.colour);
    {
        juce::Graphics::ScopedSaveState save(g);
        g.reduceClipRegion(plot);
        if (paintUnderCurves)
            paintUnderCurves(g);
        for (const auto& s : stageCurves)
            paintColumns(g, s.columns, s.colour.withAlpha(0.85f), 1.0f);
        paintColumns(g, total, curveColour(), 2.0f);
    }
}

} // namespace kerf
