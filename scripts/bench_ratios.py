#!/usr/bin/python3
"""Prints medians from a Google Benchmark JSON file and the ratios the issues ask for."""
import json
import platform
import sys

# (ours, peer, what the bar is)
PAIRS = [
    ("kerfChain24/Stereo", "juceIirChain24/Stereo",
     "24 stereo peaking sections, 512-sample blocks: Kerf throughput / JUCE IIR (bar >= 2)"),
    ("kerfChain24NoFma/Stereo", "juceIirChain24/Stereo",
     "the same without fused multiply-add (plain SSE2 kernel) / JUCE IIR (bar >= 2)"),
    ("kerfChain24/Mono", "juceIirChain24/Mono",
     "24 mono peaking sections (a voice track): Kerf throughput / JUCE IIR (no bar)"),
    ("kerfChain24/Six", "juceIirChain24/Six",
     "24 peaking sections on six channels (a 5.1 bus): Kerf throughput / JUCE IIR (no bar)"),
    ("BM_KerfResponse2048", "BM_JuceMagnitude2048",
     "chain magnitude at 2048 frequencies: Kerf speed / JUCE getMagnitudeForFrequency (bar >= 20)"),
    # The click-free layer: here the "peer" is the gliding case, so the ratio is its cost.
    ("BM_Static24Accurate", "BM_Gliding24AccurateEvery2",
     "24 sections, every parameter gliding (new targets every 2 blocks) / static (bar <= 1.5)"),
    ("BM_Static24Accurate", "BM_Gliding24AccurateEvery1",
     "24 sections, new targets every block / static (bar <= 1.5)"),
    ("BM_Static24Bilinear", "BM_Gliding24BilinearEvery2",
     "bilinear designs, gliding every 2 blocks / static (bar <= 1.5)"),
    ("BM_Static24Bilinear", "BM_Gliding24BilinearEvery1",
     "bilinear designs, new targets every block / static (bar <= 1.5)"),
    ("BM_Static24Accurate", "BM_Gliding24AccurateEvery1Glide20",
     "the same at the default 20 ms glides (knots every 32 samples) / static (bar <= 1.5)"),
    ("BM_Static24Bilinear", "BM_Gliding24BilinearEvery1Glide20",
     "bilinear designs at the default 20 ms glides / static (bar <= 1.5)"),
    ("BM_Static24Accurate", "BM_OneOf24GlidingAccurateEvery2",
     "one section of the 24 gliding (the usual automation) / static (no bar)"),
    ("BM_Static24Accurate", "BM_OneOf24GlidingAccurateEvery1Glide20",
     "the same at the default 20 ms glides, new targets every block / static (no bar)"),
    # The plugin's whole processBlock (parameters read in the block, the chain, output
    # gain and protection); the bar is on the chain itself (above).
    ("BM_PluginStatic24", "BM_PluginGliding24Every2",
     "plugin block, every section parameter automated every 2 blocks / still (no bar)"),
    ("BM_PluginStatic24", "BM_PluginGliding24Every1Glide20",
     "plugin block, automated every block at 20 ms glides / still (no bar)"),
    # Denormals: the slowest second of 60 s of silence after loud input / of loud input.
    ("BM_RingingLoud/manual_time", "BM_RingingSilence60s/manual_time",
     "feedback comb at its highest gain, slowest second of 60 s silence / loud (bar <= 1.2)"),
]

data = json.load(open(sys.argv[1]))
ctx = data.get("context", {})
print(f"machine: {platform.processor() or platform.machine()}, {ctx.get('num_cpus')} cpus, "
      f"{ctx.get('mhz_per_cpu')} MHz, load {ctx.get('load_avg')}")
medians = {}
for b in data["benchmarks"]:
    if b.get("aggregate_name") == "median":
        name = b["run_name"]
        medians[name] = b
        extra = {k: v for k, v in b.items() if k not in (
            "name", "run_name", "run_type", "repetitions", "repetition_index", "threads",
            "aggregate_name", "aggregate_unit", "iterations", "real_time", "cpu_time",
            "time_unit", "family_index", "per_family_instance_index")}
        print(f"  {name}: median real {b['real_time']:.1f} {b['time_unit']}, "
              f"cpu {b['cpu_time']:.1f} {b['time_unit']} {extra if extra else ''}")
for ours, peer, what in PAIRS:
    if ours in medians and peer in medians:
        # Manually timed benchmarks report their own measure as real time.
        key = "real_time" if ours.endswith("/manual_time") else "cpu_time"
        ratio = medians[peer][key] / medians[ours][key]
        print(f"  {what}: {ratio:.2f}x")
