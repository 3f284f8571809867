// Chain files: the documented format (README.md, "Chain files") and its error messages.
#include "ChainFile.h"
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
