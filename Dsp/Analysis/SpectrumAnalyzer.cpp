#include "SpectrumAnalyzer.h"

#include "FftwPlanner.h"

#include <fftw3.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <numbers>

namespace kerf::dsp
{

namespace
{
void releasePlan(void*& plan, double*& in, void*& out)
{
    std::lock_guard<std::mutex> lock(fftwPlannerMutex());
    if (plan != nullptr)
        fftw_destroy_plan(static_cast<fftw_plan>(plan));
    fftw_free(in);
    fftw_free(out);
    plan = nullptr;
    in = nullptr;
    out = nullptr;
}
} // namespace

SpectrumAnalyzer::SpectrumAnalyzer() = default;

SpectrumAnalyzer::~SpectrumAnalyzer()
{
    releasePlan(plan, fftIn, fftOut);
}

int SpectrumAnalyzer::fftSizeFor(double sampleRateHz) noexcept
{
    int n = 256;
    while (n < (1 << 16) && n < 0.085 * sampleRateHz)
        n <<= 1;
    return n;
}

void SpectrumAnalyzer::prepare(double sampleRateHz)
{
    const int n = fftSizeFor(sampleRateHz);
    rate = sampleRateHz;
    if (n != size || plan == nullptr)
    {
        releasePlan(plan, fftIn, fftOut);
        size = n;
        std::lock_guard<std::mutex> lock(fftwPlannerMutex());
        fftIn = fftw_alloc_real(static_cast<std::size_t>(n));
        auto* out = fftw_alloc_complex(static_cast<std::size_t>(n / 2 + 1));
        fftOut = out;
        plan = fftw_plan_dft_r2c_1d(n, fftIn, out, FFTW_ESTIMATE);
    }
    // Periodic ("DFT-even") Hann window, Harris 1978 section IV; its sum is exactly N/2.
    window.resize(static_cast<std::size_t>(n));
    windowSum = 0.0;
    for (int i = 0; i < n; ++i)
    {
        const double w = 0.5 - 0.5 * std::cos(2.0 * std::numbers::pi * i / n);
        window[static_cast<std::size_t>(i)] = w;
        windowSum += w;
    }
    for (int s = 0; s < 2; ++s)
    {
        history[s].assign(static_cast<std::size_t>(n), 0.0f);
        bins[s].assign(static_cast<std::size_t>(n / 2 + 1), kFloorDb);
    }
    mapBands();
    reset();
}

void SpectrumAnalyzer::reset()
{
    filled = 0;
    frameCount = 0;
    for (int s = 0; s < 2; ++s)
    {
        std::fill(history[s].begin(), history[s].end(), 0.0f);
        std::fill(bins[s].begin(), bins[s].end(), kFloorDb);
        frameBand[s].assign(bands.size(), static_cast<float>(kFloorDb));
        level[s].assign(bands.size(), static_cast<float>(kFloorDb));
        peak[s].assign(bands.size(), static_cast<float>(kFloorDb));
        peakAge[s].assign(bands.size(), 0.0);
    }
}

void SpectrumAnalyzer::setBandEdges(const std::vector<double>& edgesHz)
{
    edges = edgesHz;
    mapBands();
    for (int s = 0; s < 2; ++s)
    {
        frameBand[s].assign(bands.size(), static_cast<float>(kFloorDb));
        level[s].assign(bands.size(), static_cast<float>(kFloorDb));
        peak[s].assign(bands.size(), static_cast<float>(kFloorDb));
        peakAge[s].assign(bands.size(), 0.0);
    }
}

void SpectrumAnalyzer::mapBands()
{
    bands.clear();
    if (edges.size() < 2)
        return;
    bands.resize(edges.size() - 1);
    if (size == 0)
        return;
    const double spacing = rate / size;
    const int lastBin = size / 2;
    for (std::size_t b = 0; b + 1 < edges.size(); ++b)
    {
        const double fa = edges[b], fb = edges[b + 1];
        Band& band = bands[b];
        band.firstBin = std::clamp(static_cast<int>(std::ceil(fa / spacing)), 0, lastBin + 1);
        band.lastBin = std::clamp(static_cast<int>(std::ceil(fb / spacing)) - 1, -1, lastBin);
        const double centre = std::sqrt(std::max(fa, 1e-9) * std::max(fb, 1e-9)) / spacing;
        band.lowBin = std::clamp(static_cast<int>(std::floor(centre)), 0, lastBin - 1);
        band.frac = std::clamp(centre - band.lowBin, 0.0, 1.0);
    }
}

void SpectrumAnalyzer::push(const float* inputSamples, const float* outputSamples, int n)
{
    if (size == 0)
        return;
    int done = 0;
    while (done < n)
    {
        const int take = std::min(n - done, size - filled);
        std::memcpy(history[0].data() + filled, inputSamples + done,
                    sizeof(float) * static_cast<std::size_t>(take));
        std::memcpy(history[1].data() + filled, outputSamples + done,
                    sizeof(float) * static_cast<std::size_t>(take));
        filled += take;
        done += take;
        if (filled == size)
        {
            analyseFrame();
            // 50 % overlap: the second half becomes the next frame's first half.
            const int hop = hopSize();
            for (int s = 0; s < 2; ++s)
                std::memmove(history[s].data(), history[s].data() + hop,
                             sizeof(float) * static_cast<std::size_t>(size - hop));
            filled = size - hop;
        }
    }
}

void SpectrumAnalyzer::analyseFrame()
{
    auto* out = static_cast<fftw_complex*>(fftOut);
    const int half = size / 2;
    const double floorMagnitude = std::pow(10.0, kFloorDb / 20.0);
    const double hopSeconds = hopSize() / rate;
    const double riseStep = 1.0 - std::exp(-hopSeconds / std::max(ballistics.riseSeconds, 1e-9));
    const double fallStep = 1.0 - std::exp(-hopSeconds / std::max(ballistics.fallSeconds, 1e-9));
    for (int s = 0; s < 2; ++s)
    {
        const float* x = history[s].data();
        for (int i = 0; i < size; ++i)
            fftIn[i] = static_cast<double>(x[i]) * window[static_cast<std::size_t>(i)];
        fftw_execute(static_cast<fftw_plan>(plan));
        auto& b = bins[s];
        for (int k = 0; k <= half; ++k)
        {
            const double c = (k == 0 || k == half) ? 1.0 : 2.0;
            const double magnitude = c * std::hypot(out[k][0], out[k][1]) / windowSum;
            b[static_cast<std::size_t>(k)] = 20.0 * std::log10(std::max(magnitude, floorMagnitude));
        }
        for (std::size_t j = 0; j < bands.size(); ++j)
        {
            const Band& band = bands[j];
            double v = kFloorDb;
            if (band.firstBin <= band.lastBin)
                for (int k = band.firstBin; k <= band.lastBin; ++k)
                    v = std::max(v, b[static_cast<std::size_t>(k)]);
            else
                v = b[static_cast<std::size_t>(band.lowBin)] * (1.0 - band.frac) +
                    b[static_cast<std::size_t>(band.lowBin + 1)] * band.frac;
            const auto value = static_cast<float>(v);
            frameBand[s][j] = value;
            // Exponential ballistics (one-pole smoothing in dB, its own time constant up and
            // down; common practice for spectrum displays).
            float& l = level[s][j];
            l += static_cast<float>((value > l ? riseStep : fallStep) * (value - l));
            // Peak hold: a new peak restarts the hold; after holdSeconds it falls linearly.
            float& p = peak[s][j];
            double& age = peakAge[s][j];
            if (value >= p)
            {
                p = value;
                age = 0.0;
            }
            else
            {
                age += hopSeconds;
                const double falling = std::clamp(age - ballistics.holdSeconds, 0.0, hopSeconds);
                p = std::max(value, static_cast<float>(p - ballistics.fallDbPerSecond * falling));
            }
        }
    }
    ++frameCount;
}

} // namespace kerf::dsp
