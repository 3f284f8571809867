#include "EditHistory.h"

#include <algorithm>
#include <utility>

namespace kerf
{

/// One undoable step: the parameters it changed, and optional non-parameter state.
class EditHistory::Step : public juce::UndoableAction
{
public:
    Step(EditHistory& h, std::vector<Change> c, std::function<void()> u, std::function<void()> r)
        : history(h), changes(std::move(c)), undoExtra(std::move(u)), redoExtra(std::move(r))
    {
    }

    bool perform() override
    {
        // The first perform happens when the step is recorded: the change is already made.
        if (std::exchange(recorded, false))
            return true;
        history.applyChanges(changes, true);
        if (redoExtra)
            redoExtra();
        return true;
    }

    bool undo() override
    {
        history.applyChanges(changes, false);
        if (undoExtra)
            undoExtra();
        return true;
    }

    int getSizeInUnits() override { return 1 + static_cast<int>(changes.size()); }

private:
    EditHistory& history;
    std::vector<Change> changes;
    std::function<void()> undoExtra, redoExtra;
    bool recorded = true;
};

namespace
{
/// Steps kept: at least 100; beyond that, up to this many changed values in total
/// (a preset load changes up to a few hundred).
constexpr int kMaxUnits = 200000;
constexpr int kMinSteps = 100;

bool onMessageThread()
{
    return juce::MessageManager::existsAndIsCurrentThread();
}
} // namespace

EditHistory::EditHistory(juce::AudioProcessor& p) : processor(p), manager(kMaxUnits, kMinSteps)
{
    for (auto* param : processor.getParameters())
        param->addListener(this);
}

EditHistory::~EditHistory()
{
    for (auto* param : processor.getParameters())
        param->removeListener(this);
}

void EditHistory::ignore(int parameterIndex)
{
    ignored.push_back(parameterIndex);
}

bool EditHistory::isIgnored(int index) const
{
    return std::find(ignored.begin(), ignored.end(), index) != ignored.end();
}

EditHistory::Values EditHistory::capture() const
{
    const auto& params = processor.getParameters();
    Values v(static_cast<std::size_t>(params.size()));
    for (int i = 0; i < params.size(); ++i)
        v[static_cast<std::size_t>(i)] = params[i]->getValue();
    return v;
}

void EditHistory::apply(const Values& values)
{
    const juce::ScopedValueSetter<bool> guard(applying, true);
    const auto& params = processor.getParameters();
    for (int i = 0; i < params.size() && i < static_cast<int>(values.size()); ++i)
        if (!isIgnored(i) && params[i]->getValue() != values[static_cast<std::size_t>(i)])
            params[i]->setValueNotifyingHost(values[static_cast<std::size_t>(i)]);
}

void EditHistory::applyChanges(const std::vector<Change>& changes, bool after)
{
    const juce::ScopedValueSetter<bool> guard(applying, true);
    const auto& params = processor.getParameters();
    for (const auto& c : changes)
        if (juce::isPositiveAndBelow(c.index, params.size()))
            params[c.index]->setValueNotifyingHost(after ? c.after : c.before);
}

void EditHistory::record(const juce::String& name, const Values& before, const Values& after,
                         std::function<void()> undoExtra, std::function<void()> redoExtra)
{
    std::vector<Change> changes;
    for (std::size_t i = 0; i < before.size() && i < after.size(); ++i)
        if (before[i] != after[i] && !isIgnored(static_cast<int>(i)))
            changes.push_back({static_cast<int>(i), before[i], after[i]});
    if (changes.empty() && !undoExtra && !redoExtra)
        return;
    manager.beginNewTransaction(name);
    manager.perform(
        new Step(*this, std::move(changes), std::move(undoExtra), std::move(redoExtra)));
}

void EditHistory::perform(const juce::String& name, const std::function<void()>& change,
                          std::function<void()> undoExtra, std::function<void()> redoExtra)
{
    closeOpenGesture();
    const auto before = capture();
    {
        const juce::ScopedValueSetter<bool> guard(applying, true);
        change();
    }
    record(name, before, capture(), std::move(undoExtra), std::move(redoExtra));
}

bool EditHistory::undo()
{
    closeOpenGesture();
    return manager.undo();
}

bool EditHistory::redo()
{
    closeOpenGesture();
    return manager.redo();
}

void EditHistory::clear()
{
    openGestures = 0;
    gestureParameter = -1;
    manager.clearUndoHistory();
}

void EditHistory::closeOpenGesture()
{
    if (openGestures == 0)
        return;
    openGestures = 0;
    const auto& params = processor.getParameters();
    const auto name = juce::isPositiveAndBelow(gestureParameter, params.size())
                          ? "Change " + params[gestureParameter]->getName(64)
                          : juce::String("Edit");
    gestureParameter = -1;
    record(name, gestureStart, capture(), {}, {});
}

void EditHistory::parameterGestureChanged(int parameterIndex, bool gestureIsStarting)
{
    // Gestures come from controls on the message thread; anything else (a host thread, or
    // this history applying a step) is not an edit of its own.
    if (applying || isIgnored(parameterIndex) || !onMessageThread())
        return;
    if (gestureIsStarting)
    {
        if (openGestures++ == 0)
        {
            gestureStart = capture();
            gestureParameter = parameterIndex;
        }
        else if (gestureParameter != parameterIndex)
            gestureParameter = -1; // several parameters in one gesture
        return;
    }
    if (openGestures == 0)
        return;
    if (--openGestures == 0)
    {
        openGestures = 1; // closeOpenGesture records it
        closeOpenGesture();
    }
}

} // namespace kerf
