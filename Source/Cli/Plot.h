#pragma once
// A picture of a frequency response: magnitude, phase and group delay over log frequency.
#include "Response/SystemFunction.h"

#include <juce_core/juce_core.h>

namespace kerf::cli
{

/// Draws the three curves to a PNG file (1200 x 960 pixels). Returns "" or an error text.
juce::String writeResponsePlot(const juce::File& file,
                               const std::vector<dsp::ResponsePoint>& points, double sampleRateHz,
                               const juce::String& title);

} // namespace kerf::cli
