#pragma once
// The z-plane view: the unit circle with its axes, and the poles (x) and zeros (o) of every
// enabled stage, from the DSP core's stagePolesZeros.
#include "Chain.h"
#include "NewestRequestWorker.h"
#include "Response/SystemFunction.h"

#include <juce_gui_basics/juce_gui_basics.h>

#include <atomic>
#include <complex>
#include <cstdint>
#include <vector>

namespace kerf
{

/// Poles and zeros of the enabled stages on the z-plane. Coincident roots (within
/// kGroupTolerance of each other) are drawn once, their multiplicity written beside the mark.
/// Stages whose roots are not listed (combs, long or non-causal echo stages) get a one-line
/// note. Hovering shows the nearest root's radius and angle (in Hz); one stage can be
/// highlighted; a zoom shows the neighbourhood of z = 1, where low-frequency roots crowd.
/// Roots are computed on the view's own background thread (an echo model of degree 600 takes
/// about a second; never the audio thread, never blocking the message thread), only for
/// stages that changed, and only while the view is visible; the newest request wins.
class PoleZeroView : public juce::Component,
                     public juce::SettableTooltipClient,
                     private juce::AsyncUpdater
{
public:
    /// Roots closer than this in the z-plane (|z1 - z2|) count as one root of higher
    /// multiplicity. Companion-matrix eigenvalues split an exact double root by about
    /// sqrt(machine epsilon) = 1.5e-8; 1e-5 is about 0.08 Hz of angle at 48 kHz.
    static constexpr double kGroupTolerance = 1.0e-5;

    /// One drawn mark: a group of coincident roots.
    struct Mark
    {
        std::complex<double> z;  ///< mean position of the group
        bool pole = false;       ///< pole (x) or zero (o)
        int multiplicity = 1;    ///< roots in the group
        std::vector<int> stages; ///< chain indices of the stages the roots come from
        /// What is written beside the mark: the multiplicity when above 1, else empty.
        juce::String label() const { return multiplicity > 1 ? juce::String(multiplicity) : ""; }
    };

    /// What the view draws.
    struct Model
    {
        std::vector<Mark> marks;
        std::vector<juce::String> notes; ///< one line per stage whose roots are not listed
    };

    /// Groups roots (each with its stage index) into marks within a tolerance; public for
    /// tests. Order of the marks follows the first root of each group.
    static std::vector<Mark> groupRoots(const std::vector<std::complex<double>>& roots,
                                        const std::vector<int>& stages, bool pole,
                                        double tolerance = kGroupTolerance);

    PoleZeroView();
    ~PoleZeroView() override;

    /// Takes the chain to draw; roots are computed again only for stages that changed.
    void setChain(const dsp::ChainSpec& chain, double sampleRateHz);
    /// Draws one stage (chain index) in full colour and dims the others; -1 for none.
    void setHighlightedStage(int stageIndex);
    int highlightedStage() const noexcept { return highlight; }
    /// Whole plane (false) or the neighbourhood of z = 1 (true), scaled to fit every root
    /// with |z - 1| <= kZoomReach.
    void setZoomed(bool zoom);
    bool zoomed() const noexcept { return zoomNearOne; }
    static constexpr double kZoomReach = 0.35;

    /// The model drawn now (the last finished evaluation).
    const Model& model() const noexcept { return current; }
    /// Message thread: asks for the roots if the chain changed while hidden, waits until those
    /// of the latest chain are computed and takes them. False on timeout.
    bool waitForRoots(int timeoutMs = 20000);

    void paint(juce::Graphics& g) override;
    void resized() override;
    void visibilityChanged() override;
    void mouseMove(const juce::MouseEvent& e) override;
    void mouseExit(const juce::MouseEvent& e) override;
    /// A group (role) titled "Pole-zero display" holding its zoom button and stage box.
    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override;

    // ---- Geometry (public so that tests check where the marks are drawn) ------------------
    /// The square plot in this component's coordinates.
    juce::Rectangle<int> plotArea() const noexcept { return plot; }
    /// Where a point of the z-plane is drawn (before rounding to the pixel grid).
    juce::Point<float> pointForZ(std::complex<double> z) const noexcept;
    /// The z-plane point under a position of this component.
    std::complex<double> zForPoint(juce::Point<float> p) const noexcept;
    /// The centre of the mark for z: pointForZ rounded to the middle of its pixel.
    juce::Point<float> markCentre(std::complex<double> z) const noexcept;
    /// The mark nearest a position (within maxDistancePx), or nullptr.
    const Mark* markNear(juce::Point<float> p, float maxDistancePx = 14.0f) const;
    /// The readout for a mark: kind, multiplicity, stages, radius and angle in Hz.
    juce::String readoutFor(const Mark& m) const;
    /// The visible window: centre and half-size in z.
    std::complex<double> windowCentre() const noexcept { return centre; }
    double windowHalfSize() const noexcept { return halfSize; }
    /// Mark colours (opaque, used by nothing else in the view).
    static juce::Colour poleColour() noexcept { return juce::Colour(0xffef7b5f); }
    static juce::Colour zeroColour() noexcept { return juce::Colour(0xff62c2d6); }
    /// How many times stage roots have been computed (tests, diagnostics).
    int rootSolves() const noexcept { return solves.load(); }
    /// Milliseconds the last evaluation took (background thread).
    double lastEvaluationMs() const noexcept { return evaluationMs; }

private:
    void requestRoots();
    bool takeResult();
    void handleAsyncUpdate() override;
    void chooseWindow();
    void paintGrid(juce::Graphics& g);
    void paintMark(juce::Graphics& g, const Mark& m) const;

    dsp::ChainSpec chain;
    double sampleRate = 48000.0;
    bool dirty = true; // the chain changed since roots were last asked for
    bool haveChain = false;
    Model current;
    double evaluationMs = 0.0;
    int highlight = -1;
    bool zoomNearOne = false;
    std::complex<double> centre{0.0, 0.0};
    double halfSize = 1.2;
    juce::Rectangle<int> plot;
    juce::Point<float> hoverPoint{-1.0f, -1.0f};

    juce::TextButton zoomButton{"Near z = 1"};
    juce::ComboBox stageBox;

    // The background evaluation: requests in, models out.
    struct Request
    {
        dsp::ChainSpec chain;
        double sampleRateHz = 48000.0;
    };
    struct Result
    {
        Model model;
        double ms = 0.0;
    };
    /// The model of a request (background thread; solves only stages not in the cache).
    Result evaluate(const Request& request);
    struct CachedStage
    {
        dsp::StageSpec spec;
        double sampleRateHz = 0.0;
        dsp::PoleZero roots;
    };
    std::vector<CachedStage> cache; // per chain index; worker thread only
    std::atomic<int> solves{0};
    std::uint64_t shownId = 0; // message thread
    // Last member: its thread waits for requests; the destructor stops it first.
    NewestRequestWorker<Request, Result> worker{[this](const Request& r) { return evaluate(r); },
                                                [this] { triggerAsyncUpdate(); }};
};

} // namespace kerf
