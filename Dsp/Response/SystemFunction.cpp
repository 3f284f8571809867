#include "SystemFunction.h"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace kerf::dsp
{

namespace
{
constexpr double kPi = std::numbers::pi;

/// Smallest magnitude drawn or printed, so that exact nulls stay finite (-400 dB).
constexpr double kFloorMagnitude = 1.0e-20;
} // namespace

std::complex<double> evaluateSection(const BiquadCoeffs& c, double omega) noexcept
{
    const std::complex<double> z1 = std::polar(1.0, -omega); // z^-1
    const std::complex<double> z2 = z1 * z1;
    const std::complex<double> num = c.b0 + c.b1 * z1 + c.b2 * z2;
    const std::complex<double> den = 1.0 + c.a1 * z1 + c.a2 * z2;
    return num / den;
}

double sectionGroupDelay(const BiquadCoeffs& c, double omega) noexcept
{
    const std::complex<double> z1 = std::polar(1.0, -omega);
    const std::complex<double> z2 = z1 * z1;
    const std::complex<double> num = c.b0 + c.b1 * z1 + c.b2 * z2;
    const std::complex<double> numRamp = c.b1 * z1 + 2.0 * c.b2 * z2;
    const std::complex<double> den = 1.0 + c.a1 * z1 + c.a2 * z2;
    const std::complex<double> denRamp = c.a1 * z1 + 2.0 * c.a2 * z2;
    double tau = 0.0;
    if (std::abs(num) > 0.0)
        tau += (numRamp / num).real();
    if (std::abs(den) > 0.0)
        tau -= (denRamp / den).real();
    return tau;
}

std::complex<double> evaluateChain(const ChainSpec& chain, double sampleRateHz,
                                   double freqHz) noexcept
{
    const double omega = 2.0 * kPi * freqHz / sampleRateHz;
    std::complex<double> h = 1.0;
    for (int i = 0; i < chain.numStages; ++i)
    {
        const StageSections s =
            designStage(chain.stages[static_cast<std::size_t>(i)], sampleRateHz);
        for (int j = 0; j < s.count; ++j)
            h *= evaluateSection(s.sections[static_cast<std::size_t>(j)], omega);
    }
    return h;
}

std::vector<ResponsePoint> chainResponse(const ChainSpec& chain, double sampleRateHz,
                                         const std::vector<double>& freqsHz)
{
    // Design once, evaluate many times.
    std::vector<BiquadCoeffs> sections;
    for (int i = 0; i < chain.numStages; ++i)
    {
        const StageSections s =
            designStage(chain.stages[static_cast<std::size_t>(i)], sampleRateHz);
        for (int j = 0; j < s.count; ++j)
            sections.push_back(s.sections[static_cast<std::size_t>(j)]);
    }

    std::vector<ResponsePoint> out;
    out.reserve(freqsHz.size());
    double previousWrapped = 0.0, offset = 0.0;
    for (std::size_t i = 0; i < freqsHz.size(); ++i)
    {
        const double omega = 2.0 * kPi * freqsHz[i] / sampleRateHz;
        std::complex<double> h = 1.0;
        double tau = 0.0;
        for (const auto& c : sections)
        {
            h *= evaluateSection(c, omega);
            tau += sectionGroupDelay(c, omega);
        }
        // Unwrap as numpy.unwrap does: remove jumps larger than pi between neighbours.
        const double wrapped = std::arg(h);
        if (i > 0)
        {
            const double d = wrapped - previousWrapped;
            if (d > kPi)
                offset -= 2.0 * kPi * std::floor((d + kPi) / (2.0 * kPi));
            else if (d < -kPi)
                offset += 2.0 * kPi * std::floor((-d + kPi) / (2.0 * kPi));
        }
        previousWrapped = wrapped;

        ResponsePoint p;
        p.freqHz = freqsHz[i];
        p.magnitudeDb = 20.0 * std::log10(std::max(std::abs(h), kFloorMagnitude));
        p.phaseDeg = (wrapped + offset) * 180.0 / kPi;
        p.groupDelaySamples = tau;
        out.push_back(p);
    }
    return out;
}

std::vector<double> logSpacedFrequencies(double lowHz, double highHz, int n)
{
    std::vector<double> f;
    if (n <= 0)
        return f;
    f.reserve(static_cast<std::size_t>(n));
    if (n == 1)
    {
        f.push_back(lowHz);
        return f;
    }
    const double lo = std::log(lowHz), hi = std::log(highHz);
    for (int i = 0; i < n; ++i)
        f.push_back(std::exp(lo + (hi - lo) * i / (n - 1)));
    return f;
}

std::vector<double> impulseResponse(const ChainSpec& chain, double sampleRateHz, int length)
{
    std::vector<double> ir(static_cast<std::size_t>(std::max(length, 0)), 0.0);
    if (ir.empty())
        return ir;
    ir[0] = 1.0;
    ChainProcessor p;
    p.prepare(sampleRateHz, length, 1);
    p.setChain(chain);
    double* channels[1] = {ir.data()};
    p.process(channels, 1, length);
    return ir;
}

} // namespace kerf::dsp
