#pragma once
// Speech for the echo-estimation tests from Debian's espeak-ng (a formant synthesiser),
// resampled by SoX ("rate -v": its very-high-quality band-limited resampler) to the rate a
// test asks for. The script is invented: a host of the fictional "Lantern Lane" podcast
// reading her notes. espeak-ng and sox are installed by scripts/setup-deps; the same package
// versions make the same samples on every machine (espeak-ng 1.51 on Debian 12 writes
// byte-identical files run after run).
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <map>
#include <mutex>
#include <stdexcept>
#include <string>
#include <vector>

#include <unistd.h>

namespace kerf::test
{

/// About 70 s of speech at 150 words per minute.
inline const char* lanternLaneScript()
{
    return "Welcome back to Lantern Lane, the show about small repairs and the people who do "
           "them. This week we sit down in the back room of a bicycle workshop on Hollow Street, "
           "where the radiator clicks every few minutes and the kettle never seems to cool. Our "
           "guest has spent eleven winters rebuilding wheels, and she says the secret is "
           "patience, good light and a radio tuned to something quiet. We talk about spokes "
           "that sing when they are tight enough, about a customer who brought in a tandem with "
           "three flat tyres, and about the morning the shop flooded and every inner tube "
           "floated to the ceiling. Later in the show, a listener asks how to fix a squeaky "
           "hinge without oil, and we try four different answers on the studio door. The first "
           "one fails, the second one works for an hour, the third one is far too loud, and "
           "the fourth one, a little candle wax, is still holding as we record this. Before we "
           "go, thank you for the letters about last month's episode on wooden chairs. We read "
           "every one of them, and yes, we will return to the wobbly stool next season.";
}

/// The script as mono speech at sampleRateHz (peak about 0.5). Cached per rate. Throws if
/// espeak-ng or sox fails.
inline const std::vector<double>& synthesizedSpeech(double sampleRateHz)
{
    static std::mutex m;
    static std::map<long, std::vector<double>> cache;
    const std::lock_guard<std::mutex> lock(m);
    const long key = static_cast<long>(sampleRateHz);
    auto it = cache.find(key);
    if (it != cache.end())
        return it->second;
    const std::string base = "/tmp/kerf_speech_" + std::to_string(::getpid());
    const std::string text = base + ".txt", wav = base + ".wav", raw = base + ".f32";
    std::ofstream(text) << lanternLaneScript();
    const std::string cmd = "espeak-ng -v en -s 150 -w '" + wav + "' -f '" + text + "' && sox '" +
                            wav + "' -t f32 -c 1 -r " + std::to_string(key) + " '" + raw +
                            "' rate -v";
    const int rc = std::system(cmd.c_str());
    std::vector<double> out;
    {
        std::ifstream f(raw, std::ios::binary);
        float v = 0.0f;
        while (f.read(reinterpret_cast<char*>(&v), sizeof v))
            out.push_back(v);
    }
    std::remove(text.c_str());
    std::remove(wav.c_str());
    std::remove(raw.c_str());
    if (rc != 0 || out.size() < static_cast<std::size_t>(30.0 * sampleRateHz))
        throw std::runtime_error("synthesizedSpeech: espeak-ng or sox failed (scripts/setup-deps "
                                 "installs both)");
    double peak = 1e-12;
    for (double v : out)
        peak = std::max(peak, std::abs(v));
    for (double& v : out)
        v *= 0.5 / peak;
    return cache.emplace(key, std::move(out)).first->second;
}

/// `seconds` of the speech starting at the `index`-th of a set of overlapping stretches
/// (starts 6.1 s apart, wrapping), so that different cases hear different sentences.
inline std::vector<double> speechStretch(double sampleRateHz, double seconds, int index)
{
    const auto& s = synthesizedSpeech(sampleRateHz);
    const std::size_t len = static_cast<std::size_t>(seconds * sampleRateHz);
    if (s.size() <= len)
        return s;
    const std::size_t room = s.size() - len;
    const std::size_t start =
        static_cast<std::size_t>(static_cast<double>(index) * 6.1 * sampleRateHz) % room;
    return std::vector<double>(s.begin() + static_cast<long>(start),
                               s.begin() + static_cast<long>(start + len));
}

} // namespace kerf::test
