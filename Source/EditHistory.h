#pragma once
// Undo and redo of every edit (juce::UndoManager). One step is one gesture on the
// parameters (a knob held from press to release, a text entry) or one whole-state operation
// (a preset load, a chain import, an A/B switch, "all flat"). A step stores only the
// parameters it changed, as normalised values before and after.
// Message thread only; nothing here runs on the audio thread: applying a step sets
// parameters, which the audio thread reads as atomics and the click-free layer glides to.
#include <juce_audio_processors/juce_audio_processors.h>

#include <functional>
#include <vector>

namespace kerf
{

/// The edit history of one processor's parameters.
class EditHistory : private juce::AudioProcessorParameter::Listener
{
public:
    /// Every parameter's normalised value, in the processor's parameter order.
    using Values = std::vector<float>;

    /// Listens to the gestures of every parameter of `processor` (which outlives this).
    explicit EditHistory(juce::AudioProcessor& processor);
    ~EditHistory() override;

    /// Leaves a parameter out of the history: its gestures are no steps, steps do not change
    /// it and apply() leaves it alone (the bypass switch belongs to the host).
    void ignore(int parameterIndex);

    /// The current normalised value of every parameter.
    Values capture() const;
    /// Sets every parameter whose value differs (the host is told of each change), except
    /// the ignored ones.
    void apply(const Values& values);

    /// Runs `change` (which sets parameters) as one undoable step called `name`.
    /// `undoExtra` and `redoExtra`, when given, restore state that is not a parameter
    /// (for example which A/B slot is active) along with the values. A change that
    /// changes nothing records no step unless it has extras.
    void perform(const juce::String& name, const std::function<void()>& change,
                 std::function<void()> undoExtra = {}, std::function<void()> redoExtra = {});

    /// Steps back / forward. Each returns false when there is nothing to undo / redo.
    bool undo();
    bool redo();
    bool canUndo() const { return manager.canUndo(); }
    bool canRedo() const { return manager.canRedo(); }
    /// Names of the steps undo / redo would take ("" when none).
    juce::String undoName() const { return manager.getUndoDescription(); }
    juce::String redoName() const { return manager.getRedoDescription(); }
    /// Forgets every step (a host loading a session starts a fresh history).
    void clear();
    /// Closes a gesture left open (a control that lost its mouse-up) as a step of its own.
    void closeOpenGesture();

private:
    struct Change
    {
        int index;
        float before, after;
    };
    class Step;

    void parameterValueChanged(int, float) override {}
    void parameterGestureChanged(int parameterIndex, bool gestureIsStarting) override;
    void record(const juce::String& name, const Values& before, const Values& after,
                std::function<void()> undoExtra, std::function<void()> redoExtra);
    void applyChanges(const std::vector<Change>& changes, bool after);

    juce::AudioProcessor& processor;
    juce::UndoManager manager;
    Values gestureStart;
    int openGestures = 0;
    int gestureParameter = -1; // the parameter of a one-parameter gesture, else -1
    bool applying = false;
    std::vector<int> ignored;
    bool isIgnored(int index) const;

    JUCE_DECLARE_NON_COPYABLE(EditHistory)
};

} // namespace kerf
