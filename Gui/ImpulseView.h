#pragma once
// The impulse-response view: the chain's impulse response on a linear or a dB (envelope)
// scale over a time axis in milliseconds.
#include "Chain.h"
#include "NewestRequestWorker.h"
#include "Response/SystemFunction.h"

#include <juce_gui_basics/juce_gui_basics.h>

#include <cstdint>
#include <vector>

namespace kerf
{

/// Draws h[n] of the whole chain (Response/SystemFunction impulseResponse, left path, output
/// gain included). The length follows chainTailSeconds (the time to fall 60 dB), with at
/// least kMinSeconds and at most kMaxSeconds. Each pixel column covers a time interval and
/// draws the run from the lowest to the highest value in it (samples inside and the trace
/// interpolated at the interval's ends), so long responses draw without aliasing and short
/// ones as a connected line. Rendered on the view's own background thread (2 s of a comb
/// takes a few hundred ms; never the audio thread, never blocking the message thread), only
/// when the chain, rate or gain changed and the view is visible; the newest request wins.
class ImpulseView : public juce::Component,
                    public juce::SettableTooltipClient,
                    private juce::AsyncUpdater
{
public:
    static constexpr double kMinSeconds = 0.005;
    static constexpr double kMaxSeconds = 2.0;
    /// The dB scale spans this much below its top.
    static constexpr double kDbSpan = 100.0;

    ImpulseView();
    ~ImpulseView() override;

    /// Takes the chain to draw; renders again only when something differs from the last call.
    void setChain(const dsp::ChainSpec& chain, double sampleRateHz, double outputGainDb = 0.0);
    /// Linear amplitude (false) or dB of |h| as a per-column envelope (true).
    void setDecibels(bool db);
    bool decibels() const noexcept { return showDb; }

    void paint(juce::Graphics& g) override;
    void resized() override;
    void visibilityChanged() override;
    /// A group (role) titled "Impulse response display" holding its scale buttons.
    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override;

    // ---- What is drawn and where (public for tests) ---------------------------------------
    /// Message thread: asks for the response if the chain changed while hidden, waits until
    /// the latest chain's is rendered and takes it. False on timeout.
    bool waitForTrace(int timeoutMs = 20000);
    /// The samples drawn now (output gain applied).
    const std::vector<double>& samples() const noexcept { return h; }
    /// The tail the chain reports, seconds (before the length limits).
    double tailSeconds() const noexcept { return tail; }
    /// The drawn duration in seconds (samples().size() / rate).
    double durationSeconds() const noexcept;
    juce::Rectangle<int> plotArea() const noexcept { return plot; }
    /// x of a time in seconds; pixel column floor(x) holds that time.
    float xForTime(double seconds) const noexcept;
    /// The time at a (fractional) x position.
    double timeForX(double x) const noexcept;
    /// y of a linear amplitude on the linear scale, and of a level on the dB scale.
    float yForValue(double value) const noexcept;
    float yForDb(double db) const noexcept;
    double linearHalfRange() const noexcept { return linearRange; }
    double dbTop() const noexcept { return topDb; }
    /// Per plot column: lowest and highest linear value over its interval, and the dB of the
    /// largest |h| there (what the envelope draws).
    struct Column
    {
        double low = 0.0, high = 0.0, peakDb = 0.0;
    };
    const std::vector<Column>& columns() const noexcept { return cols; }
    /// The trace colour (opaque; nothing else in the plot uses it).
    static juce::Colour traceColour() noexcept { return juce::Colour(0xff9fd36b); }
    int renderCount() const noexcept { return renders; }
    /// Milliseconds the last render took (impulse response and columns).
    double lastRenderMs() const noexcept { return renderMs; }

private:
    void requestTrace();
    bool takeResult();
    void handleAsyncUpdate() override;
    void buildColumns();
    void paintGrid(juce::Graphics& g);

    dsp::ChainSpec chain;
    double sampleRate = 48000.0;
    double gainDb = 0.0;
    bool dirty = true;
    bool haveChain = false;
    bool showDb = false;
    double tail = 0.0;
    std::vector<double> h;
    std::vector<Column> cols;
    double linearRange = 1.0, linearStep = 0.5;
    double topDb = 0.0;
    juce::Rectangle<int> plot;
    int renders = 0;
    double renderMs = 0.0;

    juce::TextButton linearButton{"Linear"}, dbButton{"dB envelope"};

    // The background render: requests in, responses out.
    struct Request
    {
        dsp::ChainSpec chain;
        double sampleRateHz = 48000.0, gainDb = 0.0;
    };
    struct Result
    {
        std::vector<double> h;
        double sampleRateHz = 48000.0, tail = 0.0, peak = 0.0, ms = 0.0;
    };
    /// The impulse response of a request (background thread).
    static Result render(const Request& request);
    std::uint64_t shownId = 0;  // message thread
    double shownRate = 48000.0; // the rate of the samples drawn
    // Last member: its thread waits for requests; the destructor stops it first.
    NewestRequestWorker<Request, Result> worker{[](const Request& r) { return render(r); },
                                                [this] { triggerAsyncUpdate(); }};
};

} // namespace kerf
