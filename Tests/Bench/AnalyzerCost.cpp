// The live analyzer's cost on the editor side: repainting at 30 frames per second with the
// analyzer on, as CPU time per second of (simulated) wall time, in percent of one core.
//
//   kerf_analyzer_cost [repetitions=9] [seconds=2] [last-paint.png]
//
// The processor runs a chain on a music-like test signal (48 kHz, 512-sample blocks); every
// 1/30 s of audio, the analysis drains the FIFO (LiveAnalyzer::pump, the background
// thread's work, here on the same thread) and the editor's response view is painted into an
// offscreen software-rendered juce::Image at the editor's default size, once as JUCE
// repaints it when the analyzer asks (the plot area) and once whole. Process CPU time
// (CLOCK_PROCESS_CPUTIME_ID) is taken around the analysis and the paints only, not around
// the audio processing. Reported: the median over repetitions, analyzer on and (the peer in
// the same run) off. Issue bar: at most 10 % of one core with the analyzer on.
#include "KerfEditor.h"
#include "PluginProcessor.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <random>
#include <vector>

namespace
{
double cpuSeconds()
{
    timespec t{};
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

double median(std::vector<double> v)
{
    std::sort(v.begin(), v.end());
    const auto n = v.size();
    return n == 0 ? 0.0 : (n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]));
}

/// Test signal (invented): three partials of a 110 Hz tone, a 2.5 kHz tone and low-passed
/// noise, about -12 dBFS.
struct Source
{
    std::mt19937 rng{2024u};
    std::normal_distribution<float> noise{0.0f, 1.0f};
    double phase = 0.0;
    float lp = 0.0f;
    float next()
    {
        phase += 2.0 * 3.141592653589793 / 48000.0;
        lp += 0.05f * (noise(rng) - lp);
        const double tone = 0.12 * std::sin(110.0 * phase) + 0.06 * std::sin(220.0 * phase) +
                            0.03 * std::sin(330.0 * phase) + 0.02 * std::sin(2500.0 * phase);
        return static_cast<float>(tone) + 0.2f * lp;
    }
};
} // namespace

int main(int argc, char** argv)
{
    const int repetitions = argc > 1 ? std::max(1, std::atoi(argv[1])) : 9;
    const int seconds = argc > 2 ? std::max(1, std::atoi(argv[2])) : 2;
    constexpr double kFs = 48000.0;
    constexpr int kBlock = 512;
    constexpr int kFps = 30;

    juce::ScopedJuceInitialiser_GUI init;
    kerf::KerfProcessor processor;
    processor.setCurrentProgram(1); // a factory preset: a few sections
    processor.setPlayConfigDetails(2, 2, kFs, kBlock);
    processor.prepareToPlay(kFs, kBlock);
    kerf::KerfEditor editor(processor); // its default size
    auto& response = editor.responseView();
    // Let the response curve arrive (its evaluation may finish asynchronously).
    editor.refreshResponse();
    juce::MessageManager::getInstance()->runDispatchLoopUntil(1500);
    auto& view = editor.analyzerView();
    juce::Image image(juce::Image::ARGB, response.getWidth(), response.getHeight(), true,
                      juce::SoftwareImageType());

    Source source;
    juce::AudioBuffer<float> buffer(2, kBlock);
    juce::MidiBuffer midi;
    long long samplesDone = 0;
    auto playUntil = [&](long long target)
    {
        while (samplesDone < target)
        {
            for (int i = 0; i < kBlock; ++i)
            {
                const float v = source.next();
                buffer.setSample(0, i, v);
                buffer.setSample(1, i, 0.9f * v);
            }
            processor.processBlock(buffer, midi);
            samplesDone += kBlock;
        }
    };

    // One repetition: `seconds` of audio; returns percent of one core for the analysis and
    // the chosen paint, and the analysis alone.
    struct Result
    {
        double plotPercent, wholePercent, analysisPercent;
    };
    auto run = [&](bool analyzerOn) -> Result
    {
        double plotCpu = 0.0, wholeCpu = 0.0, analysisCpu = 0.0;
        const long long frameSamples = static_cast<long long>(kFs) / kFps;
        for (int frame = 0; frame < seconds * kFps; ++frame)
        {
            playUntil(samplesDone + frameSamples);
            const double t0 = cpuSeconds();
            if (analyzerOn)
            {
                view.analyzer().pump();
                view.refresh();
            }
            const double t1 = cpuSeconds();
            {
                juce::Graphics g(image);
                g.reduceClipRegion(response.plotArea()); // what refresh() repaints
                response.paintEntireComponent(g, true);
            }
            const double t2 = cpuSeconds();
            {
                juce::Graphics g(image);
                response.paintEntireComponent(g, true);
            }
            const double t3 = cpuSeconds();
            analysisCpu += t1 - t0;
            plotCpu += (t1 - t0) + (t2 - t1);
            wholeCpu += (t1 - t0) + (t3 - t2);
        }
        return {100.0 * plotCpu / seconds, 100.0 * wholeCpu / seconds,
                100.0 * analysisCpu / seconds};
    };

    std::printf("kerf_analyzer_cost: %d repetitions of %d s, %d paints/s, response view %dx%d "
                "(editor default size %dx%d), software-rendered offscreen image\n",
                repetitions, seconds, kFps, response.getWidth(), response.getHeight(),
                editor.getWidth(), editor.getHeight());
    for (bool on : {false, true})
    {
        view.setAnalyzerOn(on, false); // no thread: pump() runs here, inside the timing
        run(on);                       // warm-up (glyph caches, first frames)
        std::vector<double> plot, whole, analysis;
        for (int r = 0; r < repetitions; ++r)
        {
            const auto res = run(on);
            plot.push_back(res.plotPercent);
            whole.push_back(res.wholePercent);
            analysis.push_back(res.analysisPercent);
        }
        std::printf("analyzer %-3s  plot repaint: median %.2f %% of one core (min %.2f, max "
                    "%.2f); whole response view: median %.2f %%; analysis alone: median %.2f "
                    "%%\n",
                    on ? "on" : "off", median(plot), *std::min_element(plot.begin(), plot.end()),
                    *std::max_element(plot.begin(), plot.end()), median(whole), median(analysis));
    }
    // Sanity: the painted plot holds the response curve (its own colour) as well.
    int curvePixels = 0;
    for (int y = 0; y < image.getHeight(); ++y)
        for (int x = 0; x < image.getWidth(); ++x)
            curvePixels += image.getPixelAt(x, y) == kerf::ResponseView::curveColour() ? 1 : 0;
    std::printf("curve-coloured pixels in the last paint: %d\n", curvePixels);
    if (argc > 3) // the last paint, to look at
    {
        juce::File file(juce::File::getCurrentWorkingDirectory().getChildFile(argv[3]));
        file.deleteFile();
        juce::FileOutputStream stream(file);
        if (stream.openedOk())
            juce::PNGImageFormat().writeImageToStream(image, stream);
    }
    std::printf("dropped pairs: %llu (analysis kept up: expect 0)\n",
                static_cast<unsigned long long>(processor.analyzerFifo().dropped()));
    view.setAnalyzerOn(false);
    return 0;
}
