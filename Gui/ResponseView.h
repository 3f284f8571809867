#pragma once
// The response display: magnitude, unwrapped phase or group delay of the chain's exact
// system function H(z) over a log-frequency axis, with each stage's own curve on demand.
#include "Chain.h"
#include "Response/SystemFunction.h"
#include "SectionHandles.h"

#include <juce_gui_basics/juce_gui_basics.h>

#include <atomic>
#include <condition_variable>
#include <cstdint>
#include <functional>
#include <mutex>
#include <optional>
#include <thread>
#include <vector>

namespace kerf
{

/// Draws what the chain does, computed from its system function (Response/SystemFunction):
/// every enabled stage, combs and echo cancellers included. Each pixel column shows the
/// minimum and maximum of H over the column's frequency interval, sampled densely enough
/// for the chain's longest delay (and at the combs' exact peaks and notches), so fine comb
/// structure draws as a filled band instead of an aliased line. Evaluation runs on the
/// view's own background thread (never the audio thread, never blocking the message thread),
/// and only when the chain, the sample rate, the view or the size changed; a change that
/// arrives while one is evaluated replaces any older waiting one.
class ResponseView : public juce::Component,
                     public juce::SettableTooltipClient,
                     private juce::AsyncUpdater
{
public:
    /// What the curve shows.
    enum class Mode
    {
        magnitude,  ///< dB
        phase,      ///< degrees, unwrapped from near 0 Hz upwards
        groupDelay, ///< milliseconds
    };

    ResponseView();
    ~ResponseView() override;

    /// Takes the chain to draw; re-evaluates only when something differs from the last call.
    /// outputGainDb (the plugin's output gain) shifts the magnitude curve.
    void setChain(const dsp::ChainSpec& chain, double sampleRateHz, double outputGainDb = 0.0);

    void setMode(Mode newMode);
    Mode mode() const noexcept { return currentMode; }
    /// Draws each enabled stage's own contribution under the whole chain's curve.
    void setShowStages(bool show);
    bool showsStages() const noexcept { return showStages; }
    /// Which path through a stereo chain the curve follows (left, right, mid or side).
    void setChannelView(dsp::ChannelView view);
    dsp::ChannelView channelView() const noexcept { return pathView; }
    /// Magnitude scale: +-halfRangeDb around 0 dB (12, 24 or 48 from the range button).
    void setMagnitudeRangeDb(double halfRangeDb);
    double magnitudeRangeDb() const noexcept { return magnitudeHalfRange; }

    void paint(juce::Graphics& g) override;
    void resized() override;
    /// A group (role) titled "Response display" holding its buttons and the section handles.
    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override;
    /// Painted inside the plot (clipped to it) after the grid and under the curves: the live
    /// analyzer's spectra (AnalyzerView::attachTo sets it).
    std::function<void(juce::Graphics&)> paintUnderCurves;

    // ---- Geometry (public so that tests check where the curve is drawn) -----------------
    /// The plot rectangle in this component's coordinates (axes labels lie outside it).
    juce::Rectangle<int> plotArea() const noexcept { return plot; }
    /// Frequency axis: 20 Hz to the Nyquist frequency, at most 24 kHz.
    static constexpr double kLowHz = 20.0;
    double highHz() const noexcept;
    /// x in this component's coordinates; pixel column floor(x) holds that frequency.
    float xForFrequency(double freqHz) const noexcept;
    /// The frequency at a (fractional) x position.
    double frequencyForX(double x) const noexcept;
    /// y of a value in the current mode's unit (dB, degrees or ms).
    float yForValue(double value) const noexcept;
    /// y of a magnitude in dB on the magnitude scale (whatever the mode).
    float yForDb(double db) const noexcept;
    /// The magnitude in dB at a (fractional) y position: the inverse of yForDb.
    double dbForY(double y) const noexcept;
    /// The current vertical range, in the mode's unit.
    double bottomValue() const noexcept { return rangeLow; }
    double topValue() const noexcept { return rangeHigh; }
    /// The whole chain's curve colour (opaque; nothing else in the plot uses it).
    static juce::Colour curveColour() noexcept { return juce::Colour(0xfff2a65a); }

    // ---- What the last evaluation did (tests, diagnostics) --------------------------------
    /// Per plot column: lowest and highest value over the column's frequency interval.
    struct Column
    {
        double low = 0.0, high = 0.0;
    };
    const std::vector<Column>& columns() const noexcept { return total; }

    // ---- Direct manipulation ---------------------------------------------------------------
    /// Shows a handle per enabled section slot of `state` (magnitude view only) and lets the
    /// mouse edit the slots' frequency, gain and Q through their parameters.
    void attachParameters(juce::AudioProcessorValueTreeState& state);
    SectionHandles& sectionHandles() noexcept { return handles; }
    /// Message thread: waits until the curve for the latest change has been evaluated and
    /// takes it (otherwise it arrives asynchronously). False on timeout. For tests and
    /// snapshots.
    bool waitForCurve(int timeoutMs = 20000);
    /// How many times the response has been evaluated since construction.
    int evaluationCount() const noexcept { return evaluations.load(); }
    /// Frequencies evaluated for the curve shown (whole chain, one path).
    int pointsEvaluated() const noexcept { return points; }
    /// Milliseconds the evaluation of the curve shown took (all curves, background thread).
    double lastEvaluationMs() const noexcept { return evaluationMs; }

private:
    /// Asks the background thread for the curves of the current settings.
    void evaluate();
    void layoutControls();
    void handleAsyncUpdate() override;
    bool takeResult();
    void workerLoop();
    void chooseRange();
    void paintGrid(juce::Graphics& g);
    void paintColumns(juce::Graphics& g, const std::vector<Column>& cols, juce::Colour colour,
                      float minThickness) const;

    dsp::ChainSpec chain;
    double sampleRate = 48000.0;
    double gainDb = 0.0;
    bool haveChain = false;
    Mode currentMode = Mode::magnitude;
    bool showStages = false;
    dsp::ChannelView pathView = dsp::ChannelView::left;
    double magnitudeHalfRange = 24.0;
    double rangeLow = -24.0, rangeHigh = 24.0, rangeStep = 6.0;

    juce::Rectangle<int> plot;
    std::vector<Column> total; // the whole chain
    struct StageCurve
    {
        juce::String label;
        juce::Colour colour;
        std::vector<Column> columns;
    };
    std::vector<StageCurve> stageCurves;
    int points = 0;
    double evaluationMs = 0.0;
    std::atomic<int> evaluations{0};

    // What the background thread evaluates, and what it hands back.
    struct Request
    {
        std::uint64_t id = 0;
        dsp::ChainSpec chain;
        double sampleRate = 48000.0, gainDb = 0.0;
        Mode mode = Mode::magnitude;
        dsp::ChannelView view = dsp::ChannelView::left;
        bool stages = false;
        int width = 0; // plot columns
    };
    struct Result
    {
        std::uint64_t id = 0;
        Mode mode = Mode::magnitude;
        dsp::ChannelView view = dsp::ChannelView::left;
        std::vector<Column> total;
        std::vector<StageCurve> stages;
        int points = 0;
        double ms = 0.0;
    };
    static Result compute(const Request& request);
    std::mutex workMutex;
    std::condition_variable workReady, resultReady;
    std::optional<Request> pending; // the newest request not yet taken by the worker
    std::optional<Result> finished; // the newest result not yet taken by the view
    std::uint64_t lastRequestId = 0;
    std::uint64_t shownId = 0; // the request whose curves are shown (message thread)
    bool quitting = false;
    std::thread worker; // started in the constructor's body, joined first in the destructor

    juce::TextButton magnitudeButton{"Magnitude"}, phaseButton{"Phase"}, delayButton{"Group delay"},
        stagesButton{"Stages"}, rangeButton{"+-24 dB"};
    juce::ComboBox pathBox;
    SectionHandles handles{*this}; // over everything; takes the mouse inside the plot only
};

} // namespace kerf
