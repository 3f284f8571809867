#pragma once
// One-line explanations of the parameters: the tooltips and accessibility help of the
// controls bound to them (the stage list).
#include <juce_core/juce_core.h>

namespace kerf
{

/// The one-line explanation of a parameter (its tooltip and accessibility help), from its ID;
/// empty for an ID it does not know (the editor's accessibility test then fails, so a new
/// parameter cannot arrive without one).
juce::String parameterTooltip(const juce::String& parameterId);

} // namespace kerf
