#pragma once
// Measuring splatter: the energy a signal has above 1 kHz, in 10 ms windows, in dBFS.
// Shared by the click-free layer's DSP tests and the command-line timeline test.
#include "Design/PassFilters.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <vector>

namespace kerf::test
{

/// Worst 10 ms window of the energy above 1 kHz, dBFS (AES17 convention, from memory: a
/// full-scale sine reads 0 dBFS, so the window's mean square plus 3.01 dB). The band is
/// taken with an 8th-order Butterworth high-pass at 1 kHz (bilinear, equal to
/// scipy.signal.butter(8, 1000, 'high', fs=fs, output='sos'), checked in
/// SectionDesignTests), run in transposed direct form II in double: it passes 1 kHz at
/// -3 dB and leaves a 100 Hz tone 160 dB down (Butterworth |H| = 1/sqrt(1 + (f/fc)^-16)).
/// Windows before `skipSeconds` are ignored (the test tone's own start).
inline double worstSplatterDbfs(const std::vector<double>& x, double fs, double skipSeconds,
                                std::vector<double>* perWindow = nullptr)
{
    const auto hp = dsp::designHighPass(1000.0, 8, dsp::PassAlignment::butterworth, 0.0, fs,
                                        dsp::DesignMode::bilinear);
    std::array<std::array<double, 2>, dsp::kMaxDesignSections> z{};
    const int window = static_cast<int>(std::lround(0.010 * fs));
    const int skip = static_cast<int>(skipSeconds * fs);
    double worst = -400.0, acc = 0.0;
    int inWindow = 0;
    for (std::size_t n = 0; n < x.size(); ++n)
    {
        double v = x[n];
        for (int s = 0; s < hp.count; ++s)
        {
            const auto& c = hp.sections[static_cast<std::size_t>(s)];
            auto& st = z[static_cast<std::size_t>(s)];
            const double y = c.b0 * v + st[0];
            st[0] = c.b1 * v - c.a1 * y + st[1];
            st[1] = c.b2 * v - c.a2 * y;
            v = y;
        }
        if (static_cast<int>(n) < skip)
            continue;
        acc += v * v;
        if (++inWindow == window)
        {
            const double db = 10.0 * std::log10(acc / window + 1e-300) + 3.0103;
            if (perWindow != nullptr)
                perWindow->push_back(db);
            worst = std::max(worst, db);
            acc = 0.0;
            inWindow = 0;
        }
    }
    return worst;
}

/// The test tone: a 100 Hz sine at -6 dBFS, faded in over its first 100 ms (raised cosine)
/// so that its own start spreads no energy above 1 kHz.
inline std::vector<double> testTone(double fs, double seconds)
{
    const int n = static_cast<int>(seconds * fs);
    std::vector<double> x(static_cast<std::size_t>(n));
    const double fadeN = 0.1 * fs;
    for (int i = 0; i < n; ++i)
    {
        const double fade = i < fadeN ? 0.5 - 0.5 * std::cos(3.141592653589793 * i / fadeN) : 1.0;
        x[static_cast<std::size_t>(i)] =
            fade * 0.5 * std::sin(2.0 * 3.141592653589793 * 100.0 * i / fs);
    }
    return x;
}

} // namespace kerf::test
