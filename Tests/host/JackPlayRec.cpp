// kerf_jack_playrec: a tiny JACK client for the LV2 host test. It plays a stereo signal into
// the plugin's inputs and records the plugin's outputs in the same process callback, so that
// every sample the plugin produced is kept (no ring buffer, no disk I/O on the audio thread).
//
// Usage: kerf_jack_playrec IN.f32 OUT.f32 CLIENT [EXTRA_FRAMES] [TIMEOUT_S]
//   IN.f32   interleaved stereo float32 (native endian), the signal to play
//   OUT.f32  written: interleaved stereo float32, len(IN) + EXTRA_FRAMES frames
//   CLIENT   JACK client name of the plugin host; its first two audio inputs receive the
//            signal and its first two audio outputs are recorded
// The server comes from JACK_DEFAULT_SERVER. Exit status 0 on success, 1 on any failure.
// The graph runs in freewheel mode (JACK's offline mode, common practice for bouncing): the
// server runs every client in order as fast as it can, so a loaded machine cannot drop
// cycles and the recording is complete.
#include <jack/jack.h>

#include <atomic>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <thread>
#include <vector>

namespace
{
constexpr int kChannels = 2;

struct State
{
    jack_port_t* out[kChannels]{};
    jack_port_t* in[kChannels]{};
    std::vector<float> play;   // interleaved
    std::vector<float> record; // interleaved
    std::size_t playFrames = 0;
    std::size_t totalFrames = 0;
    std::size_t pos = 0;
    std::atomic<bool> running{false};
    std::atomic<bool> done{false};
    std::atomic<int> xruns{0};
};

int process(jack_nframes_t n, void* arg)
{
    auto& s = *static_cast<State*>(arg);
    float* o[kChannels];
    const float* i[kChannels];
    for (int c = 0; c < kChannels; ++c)
    {
        o[c] = static_cast<float*>(jack_port_get_buffer(s.out[c], n));
        i[c] = static_cast<const float*>(jack_port_get_buffer(s.in[c], n));
    }
    const bool run = s.running.load() && !s.done.load();
    for (jack_nframes_t k = 0; k < n; ++k)
    {
        const std::size_t p = s.pos + k;
        for (int c = 0; c < kChannels; ++c)
        {
            o[c][k] = (run && p < s.playFrames) ? s.play[p * kChannels + c] : 0.0f;
            if (run && p < s.totalFrames)
                s.record[p * kChannels + c] = i[c][k];
        }
    }
    if (run)
    {
        s.pos += n;
        if (s.pos >= s.totalFrames)
            s.done.store(true);
    }
    return 0;
}

int onXrun(void* arg)
{
    static_cast<State*>(arg)->xruns.fetch_add(1);
    return 0;
}

bool connectPorts(jack_client_t* client, const char* peer, State& s)
{
    const std::string base = std::string("^") + peer + ":";
    const char** ins =
        jack_get_ports(client, base.c_str(), JACK_DEFAULT_AUDIO_TYPE, JackPortIsInput);
    const char** outs =
        jack_get_ports(client, base.c_str(), JACK_DEFAULT_AUDIO_TYPE, JackPortIsOutput);
    bool ok = ins && outs && ins[0] && ins[1] && outs[0] && outs[1];
    if (ok)
    {
        for (int c = 0; c < kChannels; ++c)
        {
            std::printf("playrec: %s -> %s, %s -> %s\n", jack_port_name(s.out[c]), ins[c], outs[c],
                        jack_port_name(s.in[c]));
            ok = ok && jack_connect(client, jack_port_name(s.out[c]), ins[c]) == 0;
            ok = ok && jack_connect(client, outs[c], jack_port_name(s.in[c])) == 0;
        }
    }
    else
        std::fprintf(stderr, "playrec: client '%s' lacks two audio inputs and outputs\n", peer);
    jack_free(ins);
    jack_free(outs);
    return ok;
}
} // namespace

int main(int argc, char** argv)
{
    if (argc < 4)
    {
        std::fprintf(stderr, "usage: %s IN.f32 OUT.f32 CLIENT [EXTRA_FRAMES] [TIMEOUT_S]\n",
                     argv[0]);
        return 1;
    }
    const std::size_t extra = argc > 4 ? std::strtoul(argv[4], nullptr, 10) : 4096;
    const double timeoutS = argc > 5 ? std::atof(argv[5]) : 30.0;

    State s;
    {
        FILE* f = std::fopen(argv[1], "rb");
        if (!f)
        {
            std::perror(argv[1]);
            return 1;
        }
        std::fseek(f, 0, SEEK_END);
        const long bytes = std::ftell(f);
        std::fseek(f, 0, SEEK_SET);
        s.play.resize(static_cast<std::size_t>(bytes) / sizeof(float));
        const std::size_t got = std::fread(s.play.data(), sizeof(float), s.play.size(), f);
        std::fclose(f);
        if (got != s.play.size() || s.play.size() % kChannels != 0 || s.play.empty())
        {
            std::fprintf(stderr, "playrec: %s is not interleaved stereo float32\n", argv[1]);
            return 1;
        }
    }
    s.playFrames = s.play.size() / kChannels;
    s.totalFrames = s.playFrames + extra;
    s.record.assign(s.totalFrames * kChannels, 0.0f);

    jack_status_t status{};
    jack_client_t* client = jack_client_open("kerf_playrec", JackNoStartServer, &status);
    if (!client)
    {
        std::fprintf(stderr, "playrec: cannot open a JACK client (status 0x%x)\n", status);
        return 1;
    }
    const char* names[kChannels][2] = {{"play_1", "rec_1"}, {"play_2", "rec_2"}};
    for (int c = 0; c < kChannels; ++c)
    {
        s.out[c] =
            jack_port_register(client, names[c][0], JACK_DEFAULT_AUDIO_TYPE, JackPortIsOutput, 0);
        s.in[c] =
            jack_port_register(client, names[c][1], JACK_DEFAULT_AUDIO_TYPE, JackPortIsInput, 0);
        if (!s.out[c] || !s.in[c])
        {
            std::fprintf(stderr, "playrec: cannot register ports\n");
            jack_client_close(client);
            return 1;
        }
    }
    jack_set_process_callback(client, process, &s);
    jack_set_xrun_callback(client, onXrun, &s);
    if (jack_activate(client) != 0 || !connectPorts(client, argv[3], s))
    {
        std::fprintf(stderr, "playrec: activation or connection failed\n");
        jack_client_close(client);
        return 1;
    }
    // Let a few cycles pass so the connections are in the graph before the first sample.
    std::this_thread::sleep_for(std::chrono::milliseconds(200));
    const bool freewheel = jack_set_freewheel(client, 1) == 0;
    s.running.store(true);

    const auto start = std::chrono::steady_clock::now();
    while (!s.done.load())
    {
        std::this_thread::sleep_for(std::chrono::milliseconds(10));
        const std::chrono::duration<double> waited = std::chrono::steady_clock::now() - start;
        if (waited.count() > timeoutS)
            break;
    }
    if (freewheel)
        jack_set_freewheel(client, 0);
    const bool complete = s.done.load();
    jack_deactivate(client);
    jack_client_close(client);
    std::printf("playrec: freewheel %s, %zu of %zu frames, %d xruns reported\n",
                freewheel ? "on" : "unavailable", complete ? s.totalFrames : s.pos, s.totalFrames,
                s.xruns.load());
    if (!complete)
    {
        std::fprintf(stderr, "playrec: timed out after %.0f s\n", timeoutS);
        return 1;
    }

    FILE* f = std::fopen(argv[2], "wb");
    if (!f || std::fwrite(s.record.data(), sizeof(float), s.record.size(), f) != s.record.size())
    {
        std::perror(argv[2]);
        if (f)
            std::fclose(f);
        return 1;
    }
    std::fclose(f);
    return 0;
}
