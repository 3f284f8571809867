// Writes the generated seed inputs of the plugin_state and audio_input fuzz targets:
//   kerf_fuzz_make_seeds <folder>   (scripts/fuzz --make-seeds writes Tests/fuzz/corpus)
// Saved states come from the plugin itself; audio files are short synthetic signals (a
// 440 Hz sine with a little noise) written by JUCE's own writers in each format and
// sample layout the command line reads. The chain_file seeds are copies of Presets/.
#include "PluginProcessor.h"

#include <juce_audio_formats/juce_audio_formats.h>

#include <cmath>
#include <cstdio>

namespace
{

void writeState(kerf::KerfProcessor& p, const juce::File& file)
{
    juce::MemoryBlock saved;
    p.getStateInformation(saved);
    file.replaceWithData(saved.getData(), saved.getSize());
}

/// A short synthetic signal: `frames` samples of a 440 Hz sine, channel k delayed by k.
juce::AudioBuffer<float> signal(int channels, int frames, double rate)
{
    juce::AudioBuffer<float> b(channels, frames);
    juce::Random random(7);
    for (int ch = 0; ch < channels; ++ch)
        for (int i = 0; i < frames; ++i)
            b.setSample(ch, i,
                        static_cast<float>(0.5 * std::sin(2.0 * juce::MathConstants<double>::pi *
                                                          440.0 * (i + ch) / rate)) +
                            0.01f * (random.nextFloat() - 0.5f));
    return b;
}

bool writeAudio(juce::AudioFormat& format, const juce::File& file, int channels, int bits,
                double rate, int frames, int quality = 0)
{
    file.deleteFile();
    auto stream = file.createOutputStream();
    if (stream == nullptr)
        return false;
    std::unique_ptr<juce::AudioFormatWriter> writer(format.createWriterFor(
        stream.get(), rate, static_cast<unsigned>(channels), bits, {}, quality));
    if (writer == nullptr)
        return false;
    stream.release(); // owned by the writer now
    const auto b = signal(channels, frames, rate);
    return writer->writeFromAudioSampleBuffer(b, 0, frames);
}

} // namespace

int main(int argc, char** argv)
{
    if (argc != 2)
    {
        std::fprintf(stderr, "usage: kerf_fuzz_make_seeds <corpus folder>\n");
        return 2;
    }
    juce::ScopedJuceInitialiser_GUI init;
    const juce::File root = juce::File::getCurrentWorkingDirectory().getChildFile(argv[1]);
    const auto states = root.getChildFile("plugin_state");
    const auto audio = root.getChildFile("audio_input");
    states.createDirectory();
    audio.createDirectory();
    bool ok = true;
    {
        kerf::KerfProcessor p; // defaults, no comparison slots
        writeState(p, states.getChildFile("defaults.state"));
    }
    {
        kerf::KerfProcessor p; // a factory preset with an echo stage, then A/B used
        p.setCurrentProgram(p.getNumPrograms() - 1);
        p.switchSlot();
        p.setCurrentProgram(3);
        writeState(p, states.getChildFile("preset-with-slots.state"));
    }

    juce::WavAudioFormat wav;
    juce::AiffAudioFormat aiff;
    juce::FlacAudioFormat flac;
    juce::OggVorbisAudioFormat ogg;
    ok &= writeAudio(wav, audio.getChildFile("stereo-16bit.wav"), 2, 16, 48000.0, 64);
    ok &= writeAudio(wav, audio.getChildFile("mono-24bit.wav"), 1, 24, 44100.0, 64);
    ok &= writeAudio(wav, audio.getChildFile("stereo-float.wav"), 2, 32, 96000.0, 32);
    ok &= writeAudio(wav, audio.getChildFile("mono-8bit.wav"), 1, 8, 8000.0, 64);
    ok &= writeAudio(wav, audio.getChildFile("three-channel-16bit.wav"), 3, 16, 48000.0, 32);
    ok &= writeAudio(aiff, audio.getChildFile("stereo-16bit.aiff"), 2, 16, 44100.0, 64);
    ok &= writeAudio(aiff, audio.getChildFile("mono-24bit.aiff"), 1, 24, 48000.0, 32);
    ok &= writeAudio(flac, audio.getChildFile("stereo-16bit.flac"), 2, 16, 48000.0, 256);
    ok &= writeAudio(flac, audio.getChildFile("mono-24bit.flac"), 1, 24, 44100.0, 256);
    ok &= writeAudio(ogg, audio.getChildFile("mono.ogg"), 1, 16, 44100.0, 256, 0);
    if (!ok)
        std::fprintf(stderr, "kerf_fuzz_make_seeds: an audio seed could not be written\n");
    return ok ? 0 : 1;
}
