#pragma once
// Draws the magnitude response of the current chain, computed from its system function.
#include "Chain.h"

#include <juce_gui_basics/juce_gui_basics.h>

#include <vector>

namespace kerf
{

/// A log-frequency magnitude plot of a chain's exact H(z). Message thread only.
class ResponseView : public juce::Component
{
public:
    ResponseView();

    /// Recomputes the curve when the chain or sample rate differ from the last call.
    void setChain(const dsp::ChainSpec& chain, double sampleRateHz);

    void paint(juce::Graphics& g) override;
    void resized() override;

    /// Display range.
    static constexpr double kLowHz = 10.0, kHighHz = 24000.0;
    static constexpr double kTopDb = 24.0, kBottomDb = -24.0;

    /// Pixel mappings (public so that tests can check where the curve is drawn).
    float xForFrequency(double freqHz) const;
    float yForDb(double db) const;

private:
    void recompute();

    dsp::ChainSpec chain;
    double sampleRate = 48000.0;
    std::vector<double> magnitudeDb; // one per pixel column
    juce::Path curve;
};

} // namespace kerf
