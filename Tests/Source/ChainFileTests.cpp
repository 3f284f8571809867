// Chain files: the documented format (README.md, "Chain files") and its error messages.
#include "ChainFile.h"
#include "ExampleChains.h"
#include "FactoryPresets.h"

#include <catch2/catch.hpp>

using namespace kerf;

namespace
{
juce::String errorOf(const char* json)
{
    const auto r = parseChainJson(json);
    REQUIRE_FALSE(r.ok);
    return r.error;
}
/// The error for a one-stage (or few-stage) chain whose stages are given as JSON text.
juce::String stageError(const char* stages)
{
    const auto r = parseChainJson(
        juce::String(R"({"format": "kerf-chain", "version": 1, "stages": [)") + stages + "]}");
    REQUIRE_FALSE(r.ok);
    return r.error;
}
} // namespace

TEST_CASE("chain file: the documented example reads back", "[chain]")
{
    // Source: the format defined in README.md (project specification of kerf-chain v1).
    const auto r = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 1000, "gain_db": 6, "q": 1.0, "enabled": true}]})");
    REQUIRE(r.ok);
    REQUIRE(r.chain.numStages == 1);
    const auto& s = r.chain.stages[0];
    CHECK(s.type == kerf::dsp::StageType::peaking);
    CHECK(s.freqHz == 1000.0);
    CHECK(s.gainDb == 6.0);
    CHECK(s.q == 1.0);
    CHECK(s.enabled);
}

TEST_CASE("chain file: write then read is exact", "[chain]")
{
    // Common practice: a saved file reproduces every value bit for bit (shortest round trip).
    kerf::dsp::ChainSpec c;
    c.push({kerf::dsp::StageType::peaking, true, 1234.56789012345, -3.3333333333333335,
            0.70710678118654757});
    c.push({kerf::dsp::StageType::peaking, false, 10.0, 30.0, 40.0});
    const auto r = parseChainJson(chainToJson(c, "round \"trip\""));
    REQUIRE(r.ok);
    CHECK(r.name == "round \"trip\"");
    REQUIRE(r.chain.numStages == 2);
    for (int i = 0; i < 2; ++i)
    {
        CHECK(r.chain.stages[i].freqHz == c.stages[i].freqHz);
        CHECK(r.chain.stages[i].gainDb == c.stages[i].gainDb);
        CHECK(r.chain.stages[i].q == c.stages[i].q);
        CHECK(r.chain.stages[i].enabled == c.stages[i].enabled);
    }
}

TEST_CASE("chain file: errors name the stage index and the field", "[chain]")
{
    // Source: issue requirement (clear message naming stage index and field); ranges from
    // Dsp/Limits.h as documented in README.md.
    CHECK(errorOf("{").contains("not valid JSON"));
    CHECK(errorOf(R"([1,2])").contains("format"));
    CHECK(errorOf(R"({"format": "other", "version": 1, "stages": []})").contains("'format'"));
    CHECK(errorOf(R"({"format": "kerf-chain", "version": 9, "stages": []})").contains("'version'"));
    CHECK(errorOf(R"({"format": "kerf-chain", "version": 1})").contains("'stages'"));
    const auto unknownType = errorOf(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 100}, {"type": "wobble", "freq_hz": 100}]})");
    CHECK(unknownType.contains("stage 1"));
    CHECK(unknownType.contains("wobble"));
    const auto badQ = errorOf(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 100, "q": 0}]})");
    CHECK(badQ.contains("stage 0"));
    CHECK(badQ.contains("'q'"));
    CHECK(badQ.contains("out of range"));
    const auto badFreq = errorOf(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 100}, {"type": "peaking", "freq_hz": 100},
        {"type": "peaking", "freq_hz": 5}]})");
    CHECK(badFreq.contains("stage 2"));
    CHECK(badFreq.contains("'freq_hz'"));
    const auto missing = errorOf(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "gain_db": 3}]})");
    CHECK(missing.contains("'freq_hz'"));
    CHECK(missing.contains("missing"));
    const auto wrongType = errorOf(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": "loud"}]})");
    CHECK(wrongType.contains("expected a number"));
    const auto typo = errorOf(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 100, "gian_db": 3}]})");
    CHECK(typo.contains("'gian_db'"));
    CHECK(errorOf(R"({"format": "kerf-chain", "version": 1, "stages": [
        {"type": "peaking", "freq_hz": 100, "enabled": "yes"}]})")
              .contains("'enabled'"));
    CHECK(errorOf(R"({"format": "kerf-chain", "version": 1, "stages": [7]})").contains("stage 0"));
}

TEST_CASE("chain file: every factory preset parses and names itself", "[chain]")
{
    // Common practice: a factory library that fails to load is a release defect.
    const auto dir = juce::File(KERF_SOURCE_DIR).getChildFile("Presets");
    const auto files = dir.findChildFiles(juce::File::findFiles, false, "*.json");
    REQUIRE(files.size() >= 1);
    for (const auto& f : files)
    {
        INFO(f.getFileName());
        const auto r = readChainFile(f);
        CHECK(r.ok);
        CHECK(r.name.isNotEmpty());
    }
    CHECK(factoryPresets().size() == files.size());
}

TEST_CASE("chain file: every section type and its fields", "[chain]")
{
    // Source: the stage-type table in README.md (kerf-chain v1).
    using namespace kerf::dsp;
    const auto r = parseChainJson(kerf::test::kEveryTypeChain);
    INFO(r.error);
    REQUIRE(r.ok);
    REQUIRE(r.chain.numStages == 9);
    const auto& s = r.chain.stages;
    CHECK(s[0].type == StageType::highPass);
    CHECK(s[0].order == 4);
    CHECK(s[0].alignment == PassAlignment::linkwitzRiley);
    CHECK(s[0].q == 0.0); // the alignment's own Q
    CHECK(s[1].channels == ChannelMode::left);
    CHECK(s[1].slope == 0.8);
    CHECK(s[2].design == DesignMode::bilinear);
    CHECK(s[3].channels == ChannelMode::mid);
    CHECK(s[4].channels == ChannelMode::side);
    CHECK(s[5].order == 1);
    CHECK(s[6].type == StageType::tilt);
    CHECK(s[7].slope == 1.0); // default
    CHECK(s[8].q == 2.5);
    CHECK_FALSE(s[8].enabled);

    // Written and read back: every field identical.
    const auto back = parseChainJson(chainToJson(r.chain));
    REQUIRE(back.ok);
    for (int i = 0; i < 9; ++i)
        CHECK(back.chain.stages[i] == r.chain.stages[i]);
}

TEST_CASE("chain file: per-type field errors", "[chain]")
{
    // Source: README.md chain-file reference (ranges and per-type fields).
    const auto err = stageError;
    CHECK(err(R"({"type": "high_pass", "freq_hz": 80, "order": 3, "alignment": "linkwitz_riley"})")
              .contains("even order"));
    CHECK(err(R"({"type": "low_pass", "freq_hz": 80, "order": 4, "q": 2})").contains("'q'"));
    CHECK(err(R"({"type": "high_pass", "freq_hz": 80, "order": 9})").contains("'order'"));
    CHECK(err(R"({"type": "high_pass", "freq_hz": 80, "order": 2.5})").contains("whole number"));
    CHECK(err(R"({"type": "low_shelf", "freq_hz": 80, "slope": 3})").contains("'slope'"));
    CHECK(err(R"({"type": "notch", "freq_hz": 80, "gain_db": 3})").contains("'gain_db'"));
    CHECK(
        err(R"({"type": "peaking", "freq_hz": 80, "channels": "centre"})").contains("'channels'"));
    CHECK(err(R"({"type": "peaking", "freq_hz": 80, "design": "exact"})").contains("'design'"));
    CHECK(err(R"({"type": "all_pass", "freq_hz": 80, "order": 3})").contains("'order'"));
    CHECK(err(R"({"type": "high_pass", "freq_hz": 80, "alignment": "bessel"})")
              .contains("'alignment'"));
}

TEST_CASE("chain file: echo_cancel stages", "[chain][echo]")
{
    // Source: README.md chain-file reference (echo_cancel fields and ranges).
    using namespace kerf::dsp;
    const auto r = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "echo_cancel", "method": "series", "terms": 6,
       "reflections": [{"delay_ms": 12.7, "gain": 0.5}, {"delay_ms": 3.25, "gain": -0.3}]},
      {"type": "echo_cancel", "reflections": [{"delay_ms": 6, "gain": 1.4}], "non_causal": true}]})");
    INFO(r.error);
    REQUIRE(r.ok);
    const auto& a = r.chain.stages[0];
    CHECK(a.type == StageType::echoCancel);
    CHECK(a.echo.method == EchoMethod::series);
    CHECK(a.echo.terms == 6);
    CHECK(a.echo.numReflections == 2);
    CHECK(a.echo.reflections[1].delayMs == 3.25);
    CHECK(a.echo.reflections[1].gain == -0.3);
    CHECK(r.chain.stages[1].nonCausal);
    const auto back = parseChainJson(chainToJson(r.chain));
    REQUIRE(back.ok);
    CHECK(back.chain.stages[0] == r.chain.stages[0]);
    CHECK(back.chain.stages[1] == r.chain.stages[1]);

    const auto err = stageError;
    CHECK(err(R"({"type": "echo_cancel", "reflections": []})").contains("'reflections'"));
    CHECK(err(R"({"type": "echo_cancel", "reflections": [{"delay_ms": 0.1, "gain": 0.5}]})")
              .contains("'delay_ms'"));
    CHECK(err(R"({"type": "echo_cancel", "reflections": [{"delay_ms": 5, "gain": 9}]})")
              .contains("'gain'"));
    CHECK(err(R"({"type": "echo_cancel", "method": "series", "non_causal": true,
                  "reflections": [{"delay_ms": 5, "gain": 0.5}]})")
              .contains("'non_causal'"));
    CHECK(
        err(R"({"type": "echo_cancel", "freq_hz": 100, "reflections": [{"delay_ms": 5, "gain": 0.5}]})")
            .contains("'freq_hz'"));
    CHECK(err(R"({"type": "echo_cancel", "reflections": [{"delay_ms": 5, "gain": 0.5}]},
                 {"type": "echo_cancel", "reflections": [{"delay_ms": 5, "gain": 0.5}]},
                 {"type": "echo_cancel", "reflections": [{"delay_ms": 5, "gain": 0.5}]})")
              .contains("at most"));
}

TEST_CASE("chain file: comb stages", "[chain][comb]")
{
    // Source: README.md chain-file reference (comb fields; feedback gain held below 1).
    using namespace kerf::dsp;
    const auto r = parseChainJson(R"({"format": "kerf-chain", "version": 1, "stages": [
      {"type": "comb", "mode": "feedback", "pitch_hz": 220, "gain": 0.9, "damping_hz": 4000, "mix": 0.5, "delay_change": "sweep"},
      {"type": "comb", "delay_ms": 2.5, "gain": -1, "interpolation": "thiran"}]})");
    INFO(r.error);
    REQUIRE(r.ok);
    CHECK(r.chain.stages[0].comb.sweepDelay);
    CHECK_FALSE(r.chain.stages[1].comb.sweepDelay); // "crossfade", the default
    CHECK(r.chain.stages[0].comb.mode == CombMode::feedback);
    CHECK(r.chain.stages[0].comb.pitchHz == 220.0);
    CHECK(r.chain.stages[0].comb.dampingHz == 4000.0);
    CHECK(r.chain.stages[1].comb.mode == CombMode::feedforward);
    CHECK(r.chain.stages[1].comb.interpolation == DelayInterpolation::thiran);
    const auto back = parseChainJson(chainToJson(r.chain));
    REQUIRE(back.ok);
    CHECK(back.chain.stages[0] == r.chain.stages[0]);
    CHECK(back.chain.stages[1] == r.chain.stages[1]);

    const auto err = stageError;
    const auto unstable =
        err(R"({"type": "comb", "mode": "feedback", "delay_ms": 5, "gain": 0.999})");
    CHECK(unstable.contains("'gain'"));
    CHECK(unstable.contains("stable"));
    CHECK(err(R"({"type": "comb", "delay_ms": 5, "pitch_hz": 100})").contains("exactly one"));
    CHECK(err(R"({"type": "comb", "delay_ms": 500})").contains("'delay_ms'"));
    CHECK(err(R"({"type": "comb", "delay_ms": 5, "mix": 2})").contains("'mix'"));
    CHECK(err(R"({"type": "comb", "delay_ms": 5, "delay_change": "glide"})")
              .contains("'delay_change'"));
    // A moving all-pass interpolator would click: sweeps need Lagrange interpolation.
    CHECK(
        err(R"({"type": "comb", "delay_ms": 5, "interpolation": "thiran", "delay_change": "sweep"})")
            .contains("lagrange"));
}
