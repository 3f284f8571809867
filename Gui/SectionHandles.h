#pragma once
// Direct manipulation of the section slots on the response display: one handle per enabled
// slot, dragged for frequency and gain, wheel or Alt-drag for Q, double-click to reset; from
// the keyboard, Tab selects, arrows and +/- step, Enter/G/Q type a value, Delete resets.
#include <juce_audio_processors/juce_audio_processors.h>
#include <juce_gui_basics/juce_gui_basics.h>

#include <optional>
#include <vector>

namespace kerf
{

class ResponseView;

/// Lies over its ResponseView (same bounds) and takes the mouse only inside the plot. Every
/// change goes through the slot's parameters with begin/endChangeGesture, so a drag, a wheel
/// notch or a reset is one undo step and hosts record it as automation.
class SectionHandles : public juce::Component, public juce::SettableTooltipClient
{
public:
    /// Q per wheel notch (up: times this factor; down: divided by it).
    static constexpr double kWheelQFactor = 1.189207115002721; // 2^(1/4)
    /// Alt-drag: pixels of vertical travel that double (upwards) or halve Q.
    static constexpr double kPixelsPerQDoubling = 60.0;
    /// Grab radius of a handle, px.
    static constexpr float kGrabRadius = 9.0f;
    /// Keyboard steps: Left/Right frequency by an octave fraction (Shift: the fine one),
    /// Up/Down gain in dB (Shift: fine), +/- Q by kWheelQFactor.
    static constexpr double kOctaveStep = 1.0 / 12.0, kFineOctaveStep = 1.0 / 48.0;
    static constexpr double kGainStepDb = 0.5, kFineGainStepDb = 0.1;

    /// The field a typed value goes to.
    enum class Field
    {
        frequency,
        gain,
        q
    };

    explicit SectionHandles(ResponseView& view);
    ~SectionHandles() override;

    /// The parameters the handles edit (the editor's processor state; outlives this).
    void attach(juce::AudioProcessorValueTreeState& state);
    bool attached() const noexcept { return params != nullptr; }

    /// An enabled slot's handle.
    struct Handle
    {
        int slot = 0;
        int type = 0;         ///< index in the slot's type choices
        bool hasGain = false; ///< peaking, shelves, tilt; others move along frequency only
        double freqHz = 0.0, gainDb = 0.0, q = 1.0;
        juce::Point<float> position; ///< in this component's (= the view's) coordinates
    };
    /// The handles as they are now, in slot order.
    std::vector<Handle> handles() const;
    /// The slot whose handle lies under a point, if any.
    std::optional<int> slotAt(juce::Point<float> p) const;
    /// The slot under the mouse (highlighted, with its readout), or -1.
    int hoveredSlot() const noexcept { return hovered; }
    /// The one-line readout of a slot: type, frequency, gain (if it has one), Q.
    juce::String readout(int slot) const;
    /// True for the slot types whose handles carry a gain.
    static bool typeHasGain(int typeIndex) noexcept;

    /// The slot selected for the keyboard, or -1.
    int selectedSlot() const noexcept;
    void select(int slot);
    /// Opens the inline text field for the selected slot (false if none, or no gain there).
    bool openField(Field field);
    /// The open text field, or nullptr.
    juce::TextEditor* field() noexcept;
    /// Applies the open field's text (one undo step; text the parameter cannot read changes
    /// nothing) or closes it unchanged.
    void commitField();
    void cancelField();
    /// True if the parameter's text conversion reads `text` as a number (with an optional
    /// "k" and "Hz"/"dB"): "2.5k", "-3 dB", "120 Hz", "1.25 kHz", "0.7".
    static bool isNumberText(const juce::String& text);

    bool keyPressed(const juce::KeyPress& key) override;
    void focusGained(FocusChangeType cause) override;
    void focusLost(FocusChangeType cause) override;
    void resized() override;
    std::unique_ptr<juce::AccessibilityHandler> createAccessibilityHandler() override;
    bool hitTest(int x, int y) override;
    void paint(juce::Graphics& g) override;
    void mouseMove(const juce::MouseEvent& e) override;
    void mouseExit(const juce::MouseEvent& e) override;
    void mouseDown(const juce::MouseEvent& e) override;
    void mouseDrag(const juce::MouseEvent& e) override;
    void mouseUp(const juce::MouseEvent& e) override;
    void mouseDoubleClick(const juce::MouseEvent& e) override;
    void mouseWheelMove(const juce::MouseEvent& e, const juce::MouseWheelDetails& wheel) override;

private:
    juce::RangedAudioParameter* param(const juce::String& id) const;
    std::optional<Handle> handleFor(int slot) const;
    /// Sets parameters as one gesture unless one is open already (a drag keeps it open).
    void set(juce::RangedAudioParameter* p, double value);
    void beginGesture(std::initializer_list<juce::RangedAudioParameter*> ps);
    void endGesture();
    /// One gesture: frequency times 2^octaves, gain plus dB, Q times factor (clamped).
    void step(int slot, double octaves, double db, double qFactor);
    void reset(int slot);
    void describe();
    void placeField();

    class ValueField : public juce::TextEditor
    {
    public:
        explicit ValueField(SectionHandles& o) : owner(o) {}
        bool keyPressed(const juce::KeyPress& key) override;
        void focusLost(FocusChangeType cause) override;

    private:
        SectionHandles& owner;
    };

    ResponseView& view;
    juce::AudioProcessorValueTreeState* params = nullptr;
    int hovered = -1;
    // The drag in progress.
    int dragSlot = -1;
    bool dragQ = false;
    juce::Point<float> grabOffset; // handle centre minus the mouse-down point
    double startQ = 1.0;
    std::vector<juce::RangedAudioParameter*> inGesture;
    int selected = -1;
    ValueField valueField{*this};
    int fieldSlot = -1;
    Field fieldKind = Field::frequency;

    JUCE_DECLARE_NON_COPYABLE(SectionHandles)
};

} // namespace kerf
