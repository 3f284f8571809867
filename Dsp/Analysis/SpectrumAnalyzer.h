#pragma once
// The live analyzer's computation (no threads here): Hann-windowed FFT frames with 50 %
// overlap of two signals (a chain's input and output), calibrated so that a full-scale sine
// reads 0 dB, mapped onto display bands (pixel columns of a log-frequency axis), with
// exponential ballistics and peak hold. Runs off the audio thread; the clock is the signal
// itself (frames pushed), so results do not depend on when the caller runs.
#include <cstdint>
#include <vector>

namespace kerf::dsp
{

/// How the displayed levels move. Times are in seconds of signal.
struct AnalyzerBallistics
{
    double riseSeconds = 0.02;     ///< exponential time constant towards a higher level
    double fallSeconds = 0.3;      ///< exponential time constant towards a lower level
    double holdSeconds = 1.0;      ///< a peak stays this long after it was reached ...
    double fallDbPerSecond = 12.0; ///< ... then falls at this rate (never below the level)
};

/// Two signals in, per-bin and per-band levels in dB out (see the file comment).
///
/// Calibration: a frame's bin k reads 20 log10(c_k |X_k| / sum(w)), c_k = 2 except at DC and
/// Nyquist (c = 1), w the periodic Hann window. sum(w) = N/2 is the window's coherent gain
/// (0.5, F. J. Harris, "On the Use of Windows for Harmonic Analysis with the Discrete Fourier
/// Transform", Proc. IEEE 66(1), 1978, Table 1) times N, so a sine of amplitude 1 centred on
/// a bin reads 0 dB; between bins it reads up to 1.42 dB less (Hann scalloping loss, same
/// table). Each band shows the highest bin whose centre lies in it (so a sine reads its level
/// whatever the band's width); a band narrower than the bin spacing with no bin centre in it
/// interpolates (in dB, linearly in frequency) between the bins around its centre.
class SpectrumAnalyzer
{
public:
    enum Signal
    {
        input = 0,
        output = 1
    };
    /// Levels below this (silence) read as this.
    static constexpr double kFloorDb = -140.0;

    SpectrumAnalyzer();
    ~SpectrumAnalyzer();
    SpectrumAnalyzer(const SpectrumAnalyzer&) = delete;
    SpectrumAnalyzer& operator=(const SpectrumAnalyzer&) = delete;

    /// Frame length for a sample rate: the power of two at or above 85 ms (4096 at 44.1 and
    /// 48 kHz: bins 10.8 and 11.7 Hz apart; 8192 at 96 kHz).
    static int fftSizeFor(double sampleRateHz) noexcept;

    /// Sets the rate (allocates, plans the FFT) and clears everything.
    void prepare(double sampleRateHz);
    /// Clears the frame in progress, the levels and the peaks.
    void reset();
    /// The display bands: band b spans [edgesHz[b], edgesHz[b + 1]) (ascending). Allocates;
    /// clears the band levels and peaks.
    void setBandEdges(const std::vector<double>& edgesHz);
    void setBallistics(const AnalyzerBallistics& b) noexcept { ballistics = b; }
    const AnalyzerBallistics& currentBallistics() const noexcept { return ballistics; }

    /// Appends n samples of each signal; analyses a frame every hopSize() samples.
    void push(const float* inputSamples, const float* outputSamples, int n);

    double sampleRate() const noexcept { return rate; }
    int fftSize() const noexcept { return size; }
    int hopSize() const noexcept { return size / 2; }
    double binHz() const noexcept { return rate / size; }
    /// Frames analysed since prepare().
    std::int64_t frames() const noexcept { return frameCount; }

    /// The last frame's level of each bin 0..N/2, dB (calibration above).
    const std::vector<double>& binLevelsDb(Signal s) const noexcept { return bins[s]; }
    int numBands() const noexcept { return static_cast<int>(bands.size()); }
    /// Per band: the last frame's value, the displayed level (ballistics), the held peak.
    const std::vector<float>& bandFrameDb(Signal s) const noexcept { return frameBand[s]; }
    const std::vector<float>& bandLevelDb(Signal s) const noexcept { return level[s]; }
    const std::vector<float>& bandPeakDb(Signal s) const noexcept { return peak[s]; }

private:
    void analyseFrame();
    void mapBands();

    struct Band
    {
        int firstBin = 0, lastBin = -1; // bin centres inside the band (none when last < first)
        int lowBin = 0;                 // otherwise interpolate between lowBin and lowBin + 1
        double frac = 0.0;
    };

    double rate = 0.0;
    int size = 0;
    int filled = 0;
    std::int64_t frameCount = 0;
    AnalyzerBallistics ballistics;
    std::vector<double> window;
    double windowSum = 1.0;
    std::vector<float> history[2];
    std::vector<double> bins[2];
    std::vector<double> edges;
    std::vector<Band> bands;
    std::vector<float> frameBand[2], level[2], peak[2];
    std::vector<double> peakAge[2]; // seconds since each band's peak
    double* fftIn = nullptr;
    void* fftOut = nullptr; // fftw_complex*
    void* plan = nullptr;   // fftw_plan
};

} // namespace kerf::dsp
