#include "Chain.h"

#include "Design/Band.h"
#include "Design/Peaking.h"
#include "Design/Shelf.h"
#include "Design/Tilt.h"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <limits>

#if defined(__SSE2__)
#include <immintrin.h>
#define KERF_HAS_SSE 1
#endif

namespace kerf::dsp
{

std::string_view stageTypeName(StageType type) noexcept
{
    switch (type)
    {
    case StageType::peaking:
        return "peaking";
    case StageType::lowShelf:
        return "low_shelf";
    case StageType::highShelf:
        return "high_shelf";
    case StageType::highPass:
        return "high_pass";
    case StageType::lowPass:
        return "low_pass";
    case StageType::notch:
        return "notch";
    case StageType::bandPass:
        return "band_pass";
    case StageType::allPass:
        return "all_pass";
    case StageType::tilt:
        return "tilt";
    case StageType::echoCancel:
        return "echo_cancel";
    case StageType::comb:
        return "comb";
    }
    return "unknown";
}

std::string_view channelModeName(ChannelMode mode) noexcept
{
    switch (mode)
    {
    case ChannelMode::both:
        return "both";
    case ChannelMode::left:
        return "left";
    case ChannelMode::right:
        return "right";
    case ChannelMode::mid:
        return "mid";
    case ChannelMode::side:
        return "side";
    }
    return "both";
}

std::string_view designModeName(DesignMode mode) noexcept
{
    return mode == DesignMode::bilinear ? "bilinear" : "accurate";
}

std::string_view alignmentName(PassAlignment alignment) noexcept
{
    return alignment == PassAlignment::linkwitzRiley ? "linkwitz_riley" : "butterworth";
}

bool ChainSpec::push(const StageSpec& s) noexcept
{
    if (numStages >= kMaxStages)
        return false;
    stages[static_cast<std::size_t>(numStages++)] = s;
    return true;
}

StageSections designStage(const StageSpec& s, double fs) noexcept
{
    StageSections out;
    if (!s.enabled)
        return out;
    switch (s.type)
    {
    case StageType::peaking:
        out.push(designPeaking(s.freqHz, s.gainDb, s.q, fs, s.design));
        break;
    case StageType::lowShelf:
        out.push(designLowShelf(s.freqHz, s.gainDb, s.slope, fs, s.design));
        break;
    case StageType::highShelf:
        out.push(designHighShelf(s.freqHz, s.gainDb, s.slope, fs, s.design));
        break;
    case StageType::highPass:
        out = designHighPass(s.freqHz, s.order, s.alignment, s.q, fs, s.design);
        break;
    case StageType::lowPass:
        out = designLowPass(s.freqHz, s.order, s.alignment, s.q, fs, s.design);
        break;
    case StageType::notch:
        out.push(designNotch(s.freqHz, s.q, fs, s.design));
        break;
    case StageType::bandPass:
        out.push(designBandPass(s.freqHz, s.q, fs, s.design));
        break;
    case StageType::allPass:
        out.push(designAllPass(s.freqHz, s.order, s.q, fs, s.design));
        break;
    case StageType::tilt:
        out.push(designTilt(s.freqHz, s.gainDb, fs, s.design));
        break;
    case StageType::echoCancel:
    case StageType::comb:
        break; // not sections: see EchoCanceller and CombStage
    }
    return out;
}

void ChainProcessor::prepare(double sampleRateHz, int maxBlockSize, int numChannels)
{
    sampleRate = sampleRateHz;
    channelCount = std::clamp(numChannels, 1, kMaxChannels);
    blockSize = std::max(maxBlockSize, 64);
    scratch.assign(scratchStride() * kMaxChannels, 0.0);
    for (auto& e : echoPool)
        e.prepare(sampleRateHz, blockSize, channelCount);
    for (auto& c : combPool)
        c.prepare(sampleRateHz, blockSize, channelCount);
    // Designs depend on the rate: everything is installed afresh by the next setChain().
    for (auto& st : stages)
        st = Stage{};
    numStages = 0;
    hasPending = false;
    reset();
}

void ChainProcessor::reset() noexcept
{
    clearMemories();
    // Moves in progress end at their targets at once: there is no sound left to click.
    ChainSpec target = hasPending ? pending : ChainSpec{};
    if (!hasPending)
    {
        target.numStages = numStages;
        for (int i = 0; i < numStages; ++i)
        {
            const Stage& st = stages[static_cast<std::size_t>(i)];
            target.stages[static_cast<std::size_t>(i)] = st.queued ? st.queuedSpec : st.spec;
        }
    }
    installNow(target);
    started = false;
    clock = 0;
}

void ChainProcessor::setGlideMs(double ms) noexcept
{
    glideMs_ = std::clamp(std::isfinite(ms) ? ms : kDefaultGlideMs, 0.0, kMaxGlideMs);
}

bool ChainProcessor::isMoving() const noexcept
{
    return hasPending || movingStages > 0;
}

int ChainProcessor::activeSections() const noexcept
{
    int n = 0;
    for (int i = 0; i < numStages; ++i)
    {
        const Voice& v = stages[static_cast<std::size_t>(i)].live;
        if (v.kind == Voice::Kind::sections)
            n += v.count;
    }
    return n;
}

namespace
{
/// Whether the stage at position i of a chain may get a live instance: the chain holds at
/// most kMaxCombStages combs and kMaxEchoStages echo stages (counted in order).
bool stageAllowed(const ChainSpec& chain, int i, int maxEcho, int maxComb) noexcept
{
    const StageType t = chain.stages[static_cast<std::size_t>(i)].type;
    if (t != StageType::comb && t != StageType::echoCancel)
        return true;
    int before = 0;
    for (int k = 0; k < i; ++k)
        before += chain.stages[static_cast<std::size_t>(k)].type == t ? 1 : 0;
    return before < (t == StageType::comb ? maxComb : maxEcho);
}

/// Folded kernel values of a section: a1, a2, g, c0, c1, c2 with
/// y = mHigh (v0 - k v1 - v2) + mBand v1 + mLow v2 = c0 v0 + c1 v1 + c2 v2.
void foldCoeffs(const SvfCoeffs& c, double* out) noexcept
{
    const double folded[6] = {c.a1, c.a2, c.g, c.mHigh, c.mBand - c.mHigh * c.k, c.mLow - c.mHigh};
    for (int m = 0; m < 6; ++m)
        out[m] = folded[m];
}

/// Processing coefficients of folded values (foldCoeffs undone): g = v2, k from
/// a1 = 1 / (1 + g (g + k)), mHigh = c0, mBand = c1 + mHigh k, mLow = c2 + mHigh.
SvfCoeffs unfoldCoeffs(const double* v) noexcept
{
    SvfCoeffs c;
    c.g = v[2];
    c.k = (1.0 / v[0] - 1.0) / c.g - c.g;
    c.mHigh = v[3];
    c.mBand = v[4] + c.mHigh * c.k;
    c.mLow = v[5] + c.mHigh;
    c.updateDerived();
    return c;
}

/// The stereo kernel's pair form of folded values: each value in both lanes.
template <typename Pair> void spreadPairs(const double* v, Pair& p) noexcept
{
    double* lanes[6] = {p.a1, p.a2, p.g, p.c0, p.c1, p.c2};
    for (int m = 0; m < 6; ++m)
        lanes[m][0] = lanes[m][1] = v[m];
}
} // namespace

void ChainProcessor::setSectionCoeffs(int idx, const SvfCoeffs& c) noexcept
{
    const auto i = static_cast<std::size_t>(idx);
    coeffs[i] = c;
    rampKnot[i] = RampCoeffs{};
    foldCoeffs(c, rampKnot[i].v);
    spreadPairs(rampKnot[i].v, pairCoeffs[i]);
    rampCubic[i] = RampCubic{};
    rampCubic[i].c[0] = rampKnot[i];
    ramping[i] = false;
}

ChainProcessor::Voice ChainProcessor::makeVoice(int stage, const StageSpec& spec, int bank,
                                                bool allowed) noexcept
{
    Voice v;
    v.channels = spec.channels;
    if (!spec.enabled || !allowed || scratch.empty())
        return v;
    if (spec.type == StageType::comb)
    {
        for (std::size_t k = 0; k < combPool.size(); ++k)
            if (!combBusy[k])
            {
                combBusy[k] = true;
                combPool[k].reset();
                combPool[k].setSettings(spec.comb);
                v.kind = Voice::Kind::comb;
                v.pool = static_cast<int>(k);
                break;
            }
        return v;
    }
    if (spec.type == StageType::echoCancel)
    {
        if (spec.nonCausal) // cannot run live: left to the offline renderer
            return v;
        for (std::size_t k = 0; k < echoPool.size(); ++k)
            if (!echoBusy[k])
            {
                echoBusy[k] = true;
                echoPool[k].reset();
                echoPool[k].setSettings(spec.echo);
                v.kind = Voice::Kind::echo;
                v.pool = static_cast<int>(k);
                break;
            }
        return v;
    }
    const StageSections designed = designStage(spec, sampleRate);
    if (designed.count == 0)
        return v;
    v.kind = Voice::Kind::sections;
    v.bank = bank;
    v.first = slot(bank, stage, 0);
    v.count = designed.count;
    for (int j = 0; j < designed.count; ++j)
    {
        const int idx = v.first + j;
        setSectionCoeffs(idx, toSvf(designed.sections[static_cast<std::size_t>(j)]));
        glides[static_cast<std::size_t>(idx)].on = false;
        // A new instance starts from rest.
        for (auto& pair : pairState)
            pair[static_cast<std::size_t>(idx)] = PairState{};
    }
    return v;
}

void ChainProcessor::releaseVoice(Voice& v) noexcept
{
    if (v.kind == Voice::Kind::comb)
        combBusy[static_cast<std::size_t>(v.pool)] = false;
    else if (v.kind == Voice::Kind::echo)
        echoBusy[static_cast<std::size_t>(v.pool)] = false;
    else if (v.kind == Voice::Kind::sections)
        freezeGlides(v);
    v = Voice{};
}

void ChainProcessor::freezeGlides(const Voice& v) noexcept
{
    if (v.kind != Voice::Kind::sections)
        return;
    for (int idx = v.first; idx < v.first + v.count; ++idx)
    {
        const auto i = static_cast<std::size_t>(idx);
        // Stay where the section is: at a knot on its glide path, between knots on its
        // running cubic, or still.
        if (glides[i].on && clock < glides[i].knotEnd)
        {
            double v[6];
            foldedNow(idx, v);
            setSectionCoeffs(idx, unfoldCoeffs(v));
        }
        else if (glides[i].on)
            setSectionCoeffs(idx, glides[i].path.coeffsAt(glides[i].tAt(clock)));
        else
            setSectionCoeffs(idx, coeffs[i]);
        glides[i].on = false;
    }
}

void ChainProcessor::installNow(const ChainSpec& chain) noexcept
{
    for (auto& b : combBusy)
        b = false;
    for (auto& b : echoBusy)
        b = false;
    for (auto& g : glides)
        g.on = false;
    const int n = std::min(chain.numStages, kMaxStages);
    for (int i = 0; i < n; ++i)
    {
        auto& st = stages[static_cast<std::size_t>(i)];
        st = Stage{};
        st.spec = chain.stages[static_cast<std::size_t>(i)];
        st.live = makeVoice(i, st.spec, 0, stageAllowed(chain, i, kMaxEchoStages, kMaxCombStages));
    }
    for (int i = n; i < kMaxStages; ++i)
        stages[static_cast<std::size_t>(i)] = Stage{};
    numStages = n;
    targetStages = n;
    hasPending = false;
    movingStages = 0;
    everyUpdate = false;
    nextKnot = 0;
    anyActive = false;
    for (int i = 0; i < n; ++i)
        anyActive = anyActive || stages[static_cast<std::size_t>(i)].live.kind != Voice::Kind::none;
}

void ChainProcessor::setChain(const ChainSpec& chain) noexcept
{
    if (!started)
    {
        installNow(chain);
        return;
    }
    const int n = std::min(chain.numStages, kMaxStages);
    // The same targets again (a host re-sending its parameters): nothing to do.
    bool same = hasPending ? n == pending.numStages : n == targetStages;
    for (int i = 0; same && i < n; ++i)
    {
        const auto u = static_cast<std::size_t>(i);
        const StageSpec& now = hasPending         ? pending.stages[u]
                               : stages[u].queued ? stages[u].queuedSpec
                                                  : stages[u].spec;
        same = chain.stages[u] == now;
    }
    if (same)
        return;
    pending = chain;
    pending.numStages = n;
    hasPending = true;
}

void ChainProcessor::startGlide(int stage, const StageSpec& spec,
                                const SettingsMotion& motion) noexcept
{
    Stage& st = stages[static_cast<std::size_t>(stage)];
    const StageSections designed = designStage(spec, sampleRate);
    if (designed.count != st.live.count)
    {
        startCrossfade(stage, spec, true);
        return;
    }
    const int len = motion.len;
    for (int j = 0; j < designed.count; ++j)
    {
        const int idx = st.live.first + j;
        Glide& g = glides[static_cast<std::size_t>(idx)];
        const SvfCoeffs target = toSvf(designed.sections[static_cast<std::size_t>(j)]);
        // From where the section is on its path, and as fast as it moves there: a glide
        // that takes over a running one starts with its velocity (GlidePath's bend), so
        // the path has no kink (restarting from rest splattered whenever targets came
        // faster than the glide time). Between two of the section's knots the new glide's
        // first segment starts from the running cubic's values and slopes here (they differ
        // from the path's by the interpolation error only); at a knot rampKnot and slope
        // already hold the path's; a still section starts at rest.
        SvfNatural from, velocity;
        double span = 1.0;
        if (g.on)
        {
            const double t = g.tAt(clock);
            from = g.path.at(t);
            // d/dt of the old path per sample, then per unit of the new glide's t.
            const double scale = g.invLen * static_cast<double>(len);
            const SvfNatural v = g.path.velocityAt(t);
            velocity = {v.logG * scale, v.logK * scale, v.mHigh * scale, v.mBand * scale,
                        v.mLow * scale};
            // A longer glide than the old one spends the velocity over the old one's length
            // (coasting over the whole of a much longer glide would carry the section far).
            span = std::min(1.0, static_cast<double>(g.len) / static_cast<double>(len));
            if (clock < g.knotEnd)
                foldedNow(idx, rampKnot[static_cast<std::size_t>(idx)].v, g.slope);
        }
        else
        {
            from = toNatural(coeffs[static_cast<std::size_t>(idx)]);
            velocity = {0.0, 0.0, 0.0, 0.0, 0.0};
            for (double& v : g.slope)
                v = 0.0;
        }
        g.path = GlidePath(from, toNatural(target), velocity, span);
        g.target = target;
        g.start = clock;
        g.len = len;
        g.invLen = 1.0 / static_cast<double>(len);
        g.step = glideKnotSamples(len);
        g.knotEnd = clock; // the first segment starts at this update
        g.on = true;
    }
    // The settings follow the same curve from where they are (with their velocity, over the
    // same bend span), so that the next target is judged from where the stage then is.
    st.settingsPath = SettingsPath(motion.at, motion.to, motion.velocity, motion.span);
    for (int i = 0; i < 4; ++i)
        st.settingsTo[i] = motion.to[i];
    st.settingsGliding = true;
    st.glideStart = clock;
    st.glideLen = len;
    st.spec = spec;
}

ChainProcessor::SettingsMotion ChainProcessor::settingsNow(const Stage& st,
                                                           const StageSpec& target) const noexcept
{
    SettingsMotion m;
    m.len = transitionSamples(std::max(glideMs_, kMinGlideMs), sampleRate);
    SettingsPath::coordinates(target, m.to);
    for (int i = 0; i < 4; ++i)
        m.velocity[i] = m.accel[i] = 0.0;
    if (!st.settingsGliding)
    {
        SettingsPath::coordinates(st.spec, m.at);
        return m;
    }
    if (clock >= st.glideStart + st.glideLen)
    {
        for (int i = 0; i < 4; ++i)
            m.at[i] = st.settingsTo[i];
        return m;
    }
    const double oldLen = static_cast<double>(st.glideLen);
    double rate[4], rate2[4];
    st.settingsPath.at(static_cast<double>(clock - st.glideStart) / oldLen, m.at, rate, rate2);
    // d/dt per unit of the old glide's t, then of the new one's (as startGlide's sections).
    const double scale = static_cast<double>(m.len) / oldLen;
    for (int i = 0; i < 4; ++i)
    {
        m.velocity[i] = rate[i] * scale;
        m.accel[i] = rate2[i] * scale * scale;
    }
    m.span = std::min(1.0, oldLen / static_cast<double>(m.len));
    return m;
}

void ChainProcessor::startCrossfade(int stage, const StageSpec& spec, bool allowed) noexcept
{
    Stage& st = stages[static_cast<std::size_t>(stage)];
    // The outgoing instance glides on along its path while it fades out (stopping it where
    // it is would put a kink in its coefficients' paths at full weight).
    st.out = st.live;
    st.settingsGliding = false;
    const int bank = st.out.kind == Voice::Kind::sections ? 1 - st.out.bank : 0;
    st.live = makeVoice(stage, spec, bank, allowed);
    st.spec = spec;
    st.queued = false;
    st.fading = st.out.kind != Voice::Kind::none || st.live.kind != Voice::Kind::none;
    st.fadePos = 0;
    st.fadeLen = transitionSamples(glideMs_, sampleRate);
}

void ChainProcessor::retarget(int stage, const StageSpec& spec, bool allowed) noexcept
{
    Stage& st = stages[static_cast<std::size_t>(stage)];
    // Judged from where the stage is, not from its last target: while its sections glide
    // the settings run on the same curve (SettingsPath). A glide that takes over a running
    // one carries its velocity, so values and slopes run on, but the path's acceleration
    // jumps there: from the old path's to the bend's, -8 v / span (B''(0) = -8, v the
    // velocity per unit t of the new glide, the bend over span of it). That jump, against
    // the largest acceleration the largest permitted move L has in the shortest glide T0
    // (kMinGlideMs): 7.513 L / T0^2 (7.513 = the largest |s''| of the transition curve,
    // computed), counts as twice that share of a further move, and the move from where the
    // stage is plus that must stay within the limits; otherwise the change crossfades.
    // Twice, because a jump spreads more energy upwards than the same acceleration reached
    // smoothly (the path is C1 there, not C3): measured (the hand with 12 and 80 ms glides,
    // SmoothingTests): counted once -83.1 dBFS, twice -86.5, about the 12 ms glides' own
    // -86.8 without takeovers.
    if (allowed && !st.fading && st.live.kind == Voice::Kind::comb && st.spec.enabled &&
        spec.enabled && spec.type == StageType::comb && !(spec == st.spec))
    {
        // A comb that asks for sweeps moves its delay (or pitch) in place; a change of the
        // sweep choice alone takes effect in place too (the same filter either way).
        StageSpec same = st.spec;
        same.comb = spec.comb;
        CombStage& comb = combPool[static_cast<std::size_t>(st.live.pool)];
        CombSettings flagOnly = comb.settings();
        flagOnly.sweepDelay = spec.comb.sweepDelay;
        if (same == spec && comb.canSweepTo(spec.comb))
        {
            comb.sweepTo(spec.comb, transitionSamples(std::max(glideMs_, kMinGlideMs), sampleRate));
            st.spec = spec;
            return;
        }
        if (same == spec && !comb.sweeping() &&
            flagOnly == clampCombSettings(spec.comb, sampleRate))
        {
            comb.setSettings(spec.comb);
            st.spec = spec;
            return;
        }
    }
    bool glidable =
        allowed && st.live.kind == Voice::Kind::sections && sectionsKeepStructure(st.spec, spec);
    SettingsMotion motion;
    if (glidable)
    {
        motion = settingsNow(st, spec);
        const double shortest =
            static_cast<double>(transitionSamples(kMinGlideMs, sampleRate)) / motion.len;
        // Per unit t^2 of the new glide, then per unit t^2 of T0 (a factor (T0 / len)^2).
        double reach[4];
        for (int i = 0; i < 4; ++i)
            reach[i] = 2.0 * (8.0 * motion.velocity[i] / motion.span + motion.accel[i]) / 7.513 *
                       shortest * shortest;
        glidable = glideMoveWithin(motion.at, motion.to, reach);
    }
    if (st.fading)
    {
        // The incoming instance may glide on; anything else waits for the crossfade to end.
        if (spec == st.spec)
            st.queued = false;
        else if (glidable)
        {
            startGlide(stage, spec, motion);
            st.queued = false;
        }
        else
        {
            st.queued = true;
            st.queuedSpec = spec;
            st.queuedAllowed = allowed;
        }
        return;
    }
    if (spec == st.spec)
        return;
    if (glidable)
        startGlide(stage, spec, motion);
    else
        startCrossfade(stage, spec, allowed);
}

void ChainProcessor::update() noexcept
{
    if (hasPending)
    {
        hasPending = false;
        const int n = pending.numStages;
        const int all = std::max(n, numStages);
        for (int i = 0; i < all; ++i)
        {
            if (i < n)
                retarget(i, pending.stages[static_cast<std::size_t>(i)],
                         stageAllowed(pending, i, kMaxEchoStages, kMaxCombStages));
            else
            {
                // A stage the new chain no longer has fades out.
                StageSpec off = stages[static_cast<std::size_t>(i)].spec;
                off.enabled = false;
                retarget(i, off, true);
            }
        }
        numStages = all;
        targetStages = n;
    }
    struct Knot
    {
        int slot;
        double dtdn; // dt/dn of the glide's time fraction (1 / its length)
        int length;  // samples to the segment's end
    };
    std::array<Knot, kMaxSectionSlots> knots;
    int numKnots = 0;
    movingStages = 0;
    anyActive = false;
    everyUpdate = false;
    nextKnot = std::numeric_limits<long long>::max();
    for (int i = 0; i < numStages; ++i)
    {
        Stage& st = stages[static_cast<std::size_t>(i)];
        if (st.fading && st.fadePos >= st.fadeLen)
        {
            releaseVoice(st.out);
            st.fading = false;
            if (st.queued)
            {
                st.queued = false;
                retarget(i, st.queuedSpec, st.queuedAllowed);
            }
        }
        bool gliding = false;
        // The live sections, and while a crossfade runs the outgoing ones, which glide on.
        auto glideOn = [&](const Voice& voice)
        {
            for (int idx = voice.first; idx < voice.first + voice.count; ++idx)
            {
                const auto u = static_cast<std::size_t>(idx);
                Glide& g = glides[u];
                if (!g.on)
                    continue;
                const long long end = g.start + g.len;
                if (clock >= end)
                {
                    // Arrived: exactly the designed target from here on.
                    g.on = false;
                    setSectionCoeffs(idx, g.target);
                    continue;
                }
                gliding = true;
                if (clock < g.knotEnd)
                {
                    nextKnot = std::min(nextKnot, g.knotEnd); // between knots: runs on
                    continue;
                }
                // A knot: the next segment ends on the path's exact values and slope one
                // knot interval on (computed below, four sections at a time).
                const long long e = std::min(clock + g.step, end);
                const int length = static_cast<int>(e - clock);
                g.knotEnd = e;
                nextKnot = std::min(nextKnot, e);
                rampOrigin[u] = clock;
                if (e < end)
                {
                    knots[numKnots++] = {idx, g.invLen, length};
                }
                else
                {
                    alignas(16) double endValues[8] = {};
                    alignas(16) const double still[8] = {};
                    foldCoeffs(g.target, endValues);
                    startCubic(idx, endValues, still, length);
                }
                ramping[u] = true;
            }
        };
        if (st.live.kind == Voice::Kind::sections)
            glideOn(st.live);
        else if (st.live.kind == Voice::Kind::comb)
        {
            // A sweeping delay moves inside the comb, sample by sample; the next update
            // after its end sees it still.
            const CombStage& comb = combPool[static_cast<std::size_t>(st.live.pool)];
            if (comb.sweeping())
            {
                gliding = true;
                nextKnot = std::min(nextKnot, clock + comb.sweepSamplesLeft());
            }
        }
        if (st.fading && st.out.kind == Voice::Kind::sections)
            glideOn(st.out);
        if (st.fading || st.queued || gliding)
            ++movingStages;
        everyUpdate = everyUpdate || st.fading || st.queued;
        anyActive = anyActive || st.fading || st.live.kind != Voice::Kind::none;
    }
    // The knots' values and slopes, four sections at a time, and their segments' cubics.
    for (int b = 0; b < numKnots; b += 4)
    {
        const int n = std::min(4, numKnots - b);
        const GlidePath* paths[4];
        double t[4], end[4][6], endSlope[4][6];
        for (int i = 0; i < n; ++i)
        {
            const Glide& g =
                glides[static_cast<std::size_t>(knots[static_cast<std::size_t>(b + i)].slot)];
            paths[i] = &g.path;
            t[i] = g.tAt(g.knotEnd);
        }
        foldedAtBatch(paths, t, n, end, endSlope);
        for (int i = 0; i < n; ++i)
        {
            const Knot& kn = knots[static_cast<std::size_t>(b + i)];
            alignas(16) double e[8] = {}, es[8] = {};
            for (int m = 0; m < 6; ++m)
            {
                e[m] = end[i][m];
                es[m] = endSlope[i][m] * kn.dtdn;
            }
            startCubic(kn.slot, e, es, kn.length);
        }
    }
    // Stages the chain no longer has are dropped once they have faded out.
    while (numStages > targetStages)
    {
        const Stage& last = stages[static_cast<std::size_t>(numStages - 1)];
        if (last.fading || last.queued || last.live.kind != Voice::Kind::none)
            break;
        stages[static_cast<std::size_t>(--numStages)] = Stage{};
    }
}

void ChainProcessor::startCubic(int idx, const double end[8], const double endSlope[8],
                                int length) noexcept
{
    // The Hermite cubic from here (exact values, the slope the last knot found) to the
    // next knot: v(n) = b + s0 n + c2 n^2 + c3 n^3 with v(K) = end, v'(K) = endSlope.
    const double K = length;
    // One division (powers of two in the usual case, where these inverses are exact).
    const double inv = 1.0 / K, inv2 = inv * inv, inv3 = inv2 * inv;
    const auto u = static_cast<std::size_t>(idx);
    Glide& g = glides[u];
    RampCubic& q = rampCubic[u];
    // All eight lanes (the last two are zeros throughout), in local copies so that the
    // loops vectorise.
    alignas(32) double b[8], s0[8], c2[8], c3[8];
    for (int m = 0; m < 8; ++m)
    {
        b[m] = rampKnot[u].v[m];
        s0[m] = g.slope[m];
    }
    for (int m = 0; m < 8; ++m)
    {
        const double rise = end[m] - b[m] - s0[m] * K, turn = endSlope[m] - s0[m];
        c2[m] = (3.0 * rise - turn * K) * inv2;
        c3[m] = (turn * K - 2.0 * rise) * inv3;
    }
    for (int m = 0; m < 8; ++m)
    {
        q.c[0].v[m] = b[m];
        q.c[1].v[m] = s0[m];
        q.c[2].v[m] = c2[m];
        q.c[3].v[m] = c3[m];
        rampKnot[u].v[m] = end[m];
        g.slope[m] = endSlope[m];
    }
    ramping[u] = true;
}

void ChainProcessor::foldedNow(int idx, double out[6], double* slope) const noexcept
{
    const auto u = static_cast<std::size_t>(idx);
    const RampCubic& q = rampCubic[u];
    const double t = static_cast<double>(clock - rampOrigin[u]);
    for (int m = 0; m < 6; ++m)
        out[m] = q.c[0].v[m] + t * (q.c[1].v[m] + t * (q.c[2].v[m] + t * q.c[3].v[m]));
    if (slope != nullptr)
        for (int m = 0; m < 6; ++m)
            slope[m] = q.c[1].v[m] + t * (2.0 * q.c[2].v[m] + t * 3.0 * q.c[3].v[m]);
}

void ChainProcessor::runSections(int channel, int firstSection, int count, double* x,
                                 int len) noexcept
{
    for (int j = firstSection; j < firstSection + count; ++j)
    {
        const auto idx = static_cast<std::size_t>(j);
        PairState& memory = pairState[static_cast<std::size_t>(channel / 2)][idx];
        const int lane = channel % 2;
        SvfState s{memory.ic1[lane], memory.ic2[lane]};
        if (!ramping[idx])
        {
            const SvfCoeffs k = coeffs[idx];
            for (int n = 0; n < len; ++n)
                x[n] = processSvf(k, s, x[n]);
        }
        else
        {
            // Gliding: the folded form with its values on the section's cubic (the stereo
            // kernels' arithmetic, one lane).
            const RampCubic& q = rampCubic[idx];
            const double n0 = static_cast<double>(clock - rampOrigin[idx]);
            double ic1 = s.ic1eq, ic2 = s.ic2eq;
            for (int n = 0; n < len; ++n)
            {
                const double t = n0 + n;
                double c[6];
                for (int m = 0; m < 6; ++m)
                    c[m] = q.c[0].v[m] + t * (q.c[1].v[m] + t * (q.c[2].v[m] + t * q.c[3].v[m]));
                const double v0 = x[n];
                const double v1 = c[1] * (v0 - ic2) + c[0] * ic1;
                const double v2 = c[2] * v1 + ic2;
                ic1 = 2.0 * v1 - ic1;
                ic2 = 2.0 * v2 - ic2;
                x[n] = c[5] * v2 + (c[4] * v1 + c[3] * v0);
            }
            s = {ic1, ic2};
        }
        memory.ic1[lane] = s.ic1eq;
        memory.ic2[lane] = s.ic2eq;
    }
}

namespace
{
/// Two gliding sections side by side for the pair kernel: for each power of n, the cubic's
/// coefficients in three groups {a1_j, a1_j+1, a2_j, a2_j+1}, {g.., c0..}, {c1.., c2..},
/// and the integrator memories as lanes [left j, left j+1, right j, right j+1].
struct alignas(32) GlidePair
{
    double q[4][12], s1[4], s2[4];
    double at[4]; // sample index of the lanes' cubics at step 0 of the kernel
};

/// The stereo kernels' view of one section: its coefficients (lanes while still, its cubic
/// while gliding) and its state lanes.
struct StretchSection
{
    double* coeffs; // still: a1, a2, g, c0, c1, c2 as pairs; gliding: the cubic (4 x 8)
    double* state;  // ic1, ic2 pairs
    double n0;      // gliding: samples since the cubic's start at the block's first sample
    bool moving;    // gliding: whether this section's cubic moves (else a constant)
};

/// One section step of the stereo kernel (Simper 2013, output mix folded):
/// v1 = a1 ic1 + a2 (v0 - ic2), v2 = ic2 + g v1, ic1 <- 2 v1 - ic1, ic2 <- 2 v2 - ic2,
/// y = c0 v0 + c1 v1 + c2 v2. COEF(m) gives coefficient m in both lanes.
#if defined(__SSE2__)
#define KERF_SECTION_STEP(MUL_ADD, COEF)                                                           \
    {                                                                                              \
        const __m128d ic1 = _mm_load_pd(st), ic2 = _mm_load_pd(st + 2);                            \
        const __m128d v3 = _mm_sub_pd(v, ic2);                                                     \
        const __m128d v1 = MUL_ADD(COEF(1), v3, _mm_mul_pd(COEF(0), ic1));                         \
        const __m128d v2 = MUL_ADD(COEF(2), v1, ic2);                                              \
        _mm_store_pd(st, _mm_sub_pd(_mm_add_pd(v1, v1), ic1));                                     \
        _mm_store_pd(st + 2, _mm_sub_pd(_mm_add_pd(v2, v2), ic2));                                 \
        v = MUL_ADD(COEF(5), v2, MUL_ADD(COEF(4), v1, _mm_mul_pd(COEF(3), v)));                    \
    }
// Still sections keep each coefficient in both lanes.
#define KERF_PAIR_COEF(m) _mm_load_pd(c + 2 * (m))
#define KERF_CUBIC_COEF(m) cf[m]
#define KERF_NO_PREPARE
/// Gliding sections: the coefficients at this sample from the section's cubic (Horner).
#define KERF_CUBIC_PREPARE                                                                         \
    __m128d cf[6];                                                                                 \
    {                                                                                              \
        const __m128d nn = _mm_set1_pd(sections[j].n0 + n);                                        \
        for (int m = 0; m < 6; m += 2)                                                             \
        {                                                                                          \
            __m128d q = _mm_load_pd(c + 24 + m);                                                   \
            q = _mm_add_pd(_mm_mul_pd(q, nn), _mm_load_pd(c + 16 + m));                            \
            q = _mm_add_pd(_mm_mul_pd(q, nn), _mm_load_pd(c + 8 + m));                             \
            q = _mm_add_pd(_mm_mul_pd(q, nn), _mm_load_pd(c + m));                                 \
            cf[m] = _mm_unpacklo_pd(q, q);                                                         \
            cf[m + 1] = _mm_unpackhi_pd(q, q);                                                     \
        }                                                                                          \
    }

inline __m128d mulAdd(__m128d a, __m128d b, __m128d c) noexcept
{
    return _mm_add_pd(_mm_mul_pd(a, b), c);
}

/// Runs a stretch of sections over both channels (one SSE2 register holds left and right)
/// in a skewed order: at step t, section j works on sample t - j. The sections of one step
/// are independent, so the processor overlaps them instead of waiting on each section's
/// recursion in turn; the fill and drain at the block's ends keep the result exact, with
/// no added latency. `carry[j]` holds the sample waiting to enter section j.
#define KERF_STRETCH_BODY(MUL_ADD, COEF, PREPARE)                                                  \
    const int last = count - 1;                                                                    \
    for (int t = 0; t < len + last; ++t)                                                           \
    {                                                                                              \
        const int jHigh = t < last ? t : last;                                                     \
        const int jLow = t - len + 1 > 0 ? t - len + 1 : 0;                                        \
        for (int j = jHigh; j >= jLow; --j)                                                        \
        {                                                                                          \
            const int n = t - j;                                                                   \
            __m128d v = j == 0 ? _mm_set_pd(r[n], l[n]) : carry[j];                                \
            double* c = sections[j].coeffs;                                                        \
            double* st = sections[j].state;                                                        \
            PREPARE KERF_SECTION_STEP(MUL_ADD, COEF) if (j == last)                                \
            {                                                                                      \
                l[n] = _mm_cvtsd_f64(v);                                                           \
                r[n] = _mm_cvtsd_f64(_mm_unpackhi_pd(v, v));                                       \
            }                                                                                      \
            else carry[j + 1] = v;                                                                 \
        }                                                                                          \
    }

void stretchKernel(const StretchSection* sections, int count, double* l, double* r, int len,
                   __m128d* carry) noexcept
{
    KERF_STRETCH_BODY(mulAdd, KERF_PAIR_COEF, KERF_NO_PREPARE)
}

/// The kernel while sections glide: coefficients from each section's cubic at sample n0 + n
/// of its segment (processors without FMA; the pair kernel below otherwise).
void stretchKernelCubic(const StretchSection* sections, int count, double* l, double* r, int len,
                        __m128d* carry) noexcept
{
    KERF_STRETCH_BODY(mulAdd, KERF_CUBIC_COEF, KERF_CUBIC_PREPARE)
}

#if defined(__x86_64__) && defined(__GNUC__)
/// On processors with fused multiply-adds (chosen once at run time; every such processor
/// also has AVX) sections run two at a time, still or gliding, in the pair kernel below. FMA
/// rounds once where the plain kernel rounds twice, so results differ in the last bits
/// between machines, never within one.
///
/// The pair kernel. The skewed order (section j works on sample t - j at step t) makes
/// adjacent sections independent, so a pair shares one 256-bit register: lanes [left of j,
/// left of j+1, right of j, right of j+1]. Gliding, the pair's cubics are laid out in three
/// groups of four ({a1_j, a1_j+1, a2_j, a2_j+1}, ...), so three Horner evaluations at
/// [n_j, n_j+1, n_j, n_j+1] give all twelve values (Moving); still, the groups hold the
/// values themselves. A 128-bit lane copy gives each coefficient in all four lanes. At the
/// ends of the block a pair may have one section working and one idle (not yet started or
/// finished): its memories are kept as they were. An odd stretch ends with an identity
/// section. Each pair's `at` gives its lanes' sample index at step 0 (the samples since each
/// cubic's start, less the section's skew). Still and gliding sections do the same
/// arithmetic, so a section's output does not depend on which of the two runs it.
template <bool Moving>
__attribute__((target("avx,fma"), always_inline)) inline void
pairKernelBody(GlidePair* w, const unsigned char* pairMoves, int pairs, double* l, double* r,
               int len) noexcept
{
    // y[p + 1]: the last outputs of pair p, lanes as the pair's; y[0] holds the next input
    // sample in the lanes of a section "-1" (1 and 3). Pair p's input is lane 1 and 3 of
    // y[p] (section 2p - 1) and lanes 0 and 2 of y[p + 1] (section 2p): one in-lane shuffle
    // of two whole-register loads, each from one whole-register store (handing samples on
    // through a double array with 128-bit stores across pairs made every load wait for two
    // stores, the CPU being unable to forward them).
    const int last = 2 * pairs - 1;
    __m256d y[ChainProcessor::kMaxSections / 2 + 2];
    for (int p = 0; p <= pairs; ++p)
        y[p] = _mm256_setzero_pd();
    for (int t = 0; t < len + last; ++t)
    {
        if (t < len)
            y[0] = _mm256_set_pd(r[t], 0.0, l[t], 0.0);
        const int pHigh = std::min(pairs - 1, t >> 1);
        const int pLow = t - len <= 0 ? 0 : (t - len + 1) >> 1;
        // Sample index of sections 2p and 2p + 1 in their segments: n0 + t - 2p (- 1).
        const __m256d tv = _mm256_set1_pd(static_cast<double>(t));
        for (int p = pHigh; p >= pLow; --p)
        {
            GlidePair& g = w[p];
            __m256d grp[3];
            // A pair whose two sections both hold still (the rest of a stretch where some
            // glide) reads its values as the still kernel does: its cubics are constants, and
            // Horner steps with zero terms would give the same values.
            if (Moving && pairMoves[p] != 0)
            {
                const __m256d nv = _mm256_add_pd(tv, _mm256_load_pd(g.at));
                for (int k = 0; k < 3; ++k)
                {
                    __m256d q = _mm256_load_pd(g.q[3] + 4 * k);
                    q = _mm256_fmadd_pd(q, nv, _mm256_load_pd(g.q[2] + 4 * k));
                    q = _mm256_fmadd_pd(q, nv, _mm256_load_pd(g.q[1] + 4 * k));
                    grp[k] = _mm256_fmadd_pd(q, nv, _mm256_load_pd(g.q[0] + 4 * k));
                }
            }
            else
                for (int k = 0; k < 3; ++k)
                    grp[k] = _mm256_load_pd(g.q[0] + 4 * k);
#define KERF_CF(m) _mm256_permute2f128_pd(grp[(m) / 2], grp[(m) / 2], (m) % 2 ? 0x11 : 0x00)
            const __m256d x = _mm256_shuffle_pd(y[p], y[p + 1], 5);
            const __m256d ic1 = _mm256_load_pd(g.s1), ic2 = _mm256_load_pd(g.s2);
            const __m256d v3 = _mm256_sub_pd(x, ic2);
            const __m256d v1 = _mm256_fmadd_pd(KERF_CF(1), v3, _mm256_mul_pd(KERF_CF(0), ic1));
            const __m256d v2 = _mm256_fmadd_pd(KERF_CF(2), v1, ic2);
            __m256d n1 = _mm256_sub_pd(_mm256_add_pd(v1, v1), ic1);
            __m256d n2 = _mm256_sub_pd(_mm256_add_pd(v2, v2), ic2);
            const __m256d out = _mm256_fmadd_pd(
                KERF_CF(5), v2, _mm256_fmadd_pd(KERF_CF(4), v1, _mm256_mul_pd(KERF_CF(3), x)));
#undef KERF_CF
            const bool lo = 2 * p > t - len; // section 2p works on a sample of this block
            const bool hi = 2 * p <= t - 1;  // section 2p + 1 does
            if (!(lo && hi))
            {
                // Lanes 0 and 2 belong to section 2p, lanes 1 and 3 to 2p + 1.
                n1 = lo ? _mm256_blend_pd(ic1, n1, 5) : _mm256_blend_pd(ic1, n1, 10);
                n2 = lo ? _mm256_blend_pd(ic2, n2, 5) : _mm256_blend_pd(ic2, n2, 10);
            }
            _mm256_store_pd(g.s1, n1);
            _mm256_store_pd(g.s2, n2);
            // Outputs of sections 2p and 2p + 1 wait for sections 2p + 1 and 2p + 2 (pairs
            // run downwards, so pair p + 1 has read them; an idle lane's output reaches only
            // lanes that are idle too).
            y[p + 1] = out;
        }
        const int n = t - last;
        if (n >= 0)
        {
            alignas(32) double o[4];
            _mm256_store_pd(o, y[pairs]);
            l[n] = o[1];
            r[n] = o[3];
        }
    }
}

__attribute__((target("avx,fma"))) void pairCubicKernelFma(GlidePair* w,
                                                           const unsigned char* pairMoves,
                                                           int pairs, double* l, double* r,
                                                           int len) noexcept
{
    pairKernelBody<true>(w, pairMoves, pairs, l, r, len);
}

__attribute__((target("avx,fma"))) void pairStillKernelFma(GlidePair* w, int pairs, double* l,
                                                           double* r, int len) noexcept
{
    pairKernelBody<false>(w, nullptr, pairs, l, r, len);
}
#endif
#undef KERF_STRETCH_BODY
#undef KERF_SECTION_STEP
#undef KERF_PAIR_COEF
#undef KERF_CUBIC_COEF
#undef KERF_CUBIC_PREPARE
#undef KERF_NO_PREPARE
#else
#error "Kerf's processing kernels need SSE2 (x86-64); add a portable kernel for other CPUs."
#endif

std::atomic<bool> fmaAllowed{true};

bool hasFma() noexcept
{
#if defined(__x86_64__) && defined(__GNUC__)
    static const bool fma = __builtin_cpu_supports("fma") && __builtin_cpu_supports("avx");
    return fma && fmaAllowed.load(std::memory_order_relaxed);
#else
    return false;
#endif
}
} // namespace

void ChainProcessor::allowFusedMultiplyAdd(bool allowed) noexcept
{
    fmaAllowed.store(allowed);
}

#if defined(__x86_64__) && defined(__GNUC__)
void ChainProcessor::runSectionPairs(const void* sectionList, int count, double* l, double* r,
                                     int len, bool moving) noexcept
{
    // Lay the stretch out pair by pair, run the pair kernel, put the memories back.
    static_assert(sizeof(GlidePair) == sizeof(GlidePairRoom));
    const auto* list = static_cast<const StretchSection*>(sectionList);
    const int pairs = (count + 1) / 2;
    auto* w = reinterpret_cast<GlidePair*>(glidePairs.data());
    unsigned char pairMoves[kMaxSections / 2 + 1];
    // Past the stretch's end, an identity section: y = v0 exactly.
    alignas(32) static constexpr double identity[32] = {0.0, 0.0, 0.0, 1.0};
    alignas(16) static constexpr double rest[4] = {0.0, 0.0, 0.0, 0.0};
    for (int p = 0; p < pairs; ++p)
    {
        GlidePair& g = w[p];
        const int j = 2 * p;
        const bool second = j + 1 < count;
        const double* a = list[j].coeffs;
        const double* b = second ? list[j + 1].coeffs : identity;
        pairMoves[p] = moving && (list[j].moving || (second && list[j + 1].moving)) ? 1 : 0;
        // Group G of power o: {c_2G of j, of j + 1, c_2G+1 of j, of j + 1}; a pair that
        // holds still needs power 0 only.
        if (moving)
            for (int o = 0; o < (pairMoves[p] != 0 ? 4 : 1); ++o)
                for (int grp = 0; grp < 3; ++grp)
                {
                    const __m128d x = _mm_load_pd(a + 8 * o + 2 * grp);
                    const __m128d y = _mm_load_pd(b + 8 * o + 2 * grp);
                    _mm_store_pd(g.q[o] + 4 * grp, _mm_unpacklo_pd(x, y));
                    _mm_store_pd(g.q[o] + 4 * grp + 2, _mm_unpackhi_pd(x, y));
                }
        else
            // Still: PairCoeffs (each value twice, value m at 2 m); the identity's values sit
            // at m (the cubic's layout), so read it as such.
            for (int grp = 0; grp < 3; ++grp)
                for (int h = 0; h < 2; ++h)
                {
                    const int m = 2 * grp + h;
                    g.q[0][4 * grp + 2 * h] = a[2 * m];
                    g.q[0][4 * grp + 2 * h + 1] = second ? b[2 * m] : identity[m];
                }
        if (moving)
        {
            g.at[0] = g.at[2] = list[j].n0 - static_cast<double>(j);
            g.at[1] = g.at[3] = (second ? list[j + 1].n0 : 0.0) - static_cast<double>(j + 1);
        }
        // Memories: ic1 = {left, right} of each section -> {left j, left j+1, right j, ...}.
        const double* sa = list[j].state;
        const double* sb = second ? list[j + 1].state : rest;
        const __m128d a1 = _mm_load_pd(sa), a2 = _mm_load_pd(sa + 2);
        const __m128d b1 = _mm_load_pd(sb), b2 = _mm_load_pd(sb + 2);
        _mm_store_pd(g.s1, _mm_unpacklo_pd(a1, b1));
        _mm_store_pd(g.s1 + 2, _mm_unpackhi_pd(a1, b1));
        _mm_store_pd(g.s2, _mm_unpacklo_pd(a2, b2));
        _mm_store_pd(g.s2 + 2, _mm_unpackhi_pd(a2, b2));
    }
    if (moving)
        pairCubicKernelFma(w, pairMoves, pairs, l, r, len);
    else
        pairStillKernelFma(w, pairs, l, r, len);
    for (int p = 0; p < pairs; ++p)
    {
        const GlidePair& g = w[p];
        const __m128d s1lo = _mm_load_pd(g.s1), s1hi = _mm_load_pd(g.s1 + 2);
        const __m128d s2lo = _mm_load_pd(g.s2), s2hi = _mm_load_pd(g.s2 + 2);
        double* sa = list[2 * p].state;
        _mm_store_pd(sa, _mm_unpacklo_pd(s1lo, s1hi));
        _mm_store_pd(sa + 2, _mm_unpacklo_pd(s2lo, s2hi));
        if (2 * p + 1 < count)
        {
            double* sb = list[2 * p + 1].state;
            _mm_store_pd(sb, _mm_unpackhi_pd(s1lo, s1hi));
            _mm_store_pd(sb + 2, _mm_unpackhi_pd(s2lo, s2hi));
        }
    }
}
#endif

void ChainProcessor::runStereoStretch(int first, int end, double* l, double* r, int len,
                                      int pair) noexcept
{
    // Sample by sample through every section of the stretch: consecutive sections are
    // independent at any instant, so their arithmetic overlaps in the CPU's pipeline
    // instead of waiting on one section's recursion; both channels share one vector.
    std::array<StretchSection, kMaxSections> list;
    int count = 0;
    bool ramp = false;
    for (int s = first; s < end; ++s)
    {
        const Voice& v = stages[static_cast<std::size_t>(s)].live;
        for (int j = v.first; j < v.first + v.count; ++j)
        {
            const auto u = static_cast<std::size_t>(j);
            list[static_cast<std::size_t>(count++)] = {
                pairCoeffs[u].a1, pairState[static_cast<std::size_t>(pair)][u].ic1, 0.0, false};
            ramp = ramp || ramping[u];
        }
    }
    if (count == 0)
        return;
    // Gliding: every section of the stretch runs on its cubic (a constant for those holding
    // still), evaluated at each sample.
    if (ramp)
    {
        int k = 0;
        for (int s = first; s < end; ++s)
        {
            const Voice& v = stages[static_cast<std::size_t>(s)].live;
            for (int j = v.first; j < v.first + v.count; ++j, ++k)
            {
                auto& item = list[static_cast<std::size_t>(k)];
                item.coeffs = rampCubic[static_cast<std::size_t>(j)].c[0].v;
                item.n0 = static_cast<double>(clock - rampOrigin[static_cast<std::size_t>(j)]);
                item.moving = ramping[static_cast<std::size_t>(j)];
            }
        }
    }
    __m128d carry[kMaxSections];
#if defined(__x86_64__) && defined(__GNUC__)
    if (hasFma())
    {
        runSectionPairs(list.data(), count, l, r, len, ramp);
        return;
    }
#endif
    if (ramp)
        stretchKernelCubic(list.data(), count, l, r, len, carry);
    else
        stretchKernel(list.data(), count, l, r, len, carry);
}

void ChainProcessor::addVoice(const Voice& v, const double* wIn, const double* wOut,
                              double* const* x, double* const* acc, int nch, int len) noexcept
{
    // acc += wOut * (H(wIn x) - wIn x): the voice's deviation from the dry signal, for its
    // faded input.
    constexpr int K = kUpdateIntervalSamples;
    double lane[kMaxChannels][K];
    double* lanes[kMaxChannels];
    for (int ch = 0; ch < kMaxChannels; ++ch)
        lanes[ch] = lane[ch];
    auto feed = [&](int ch, const double* src)
    {
        for (int n = 0; n < len; ++n)
            lane[ch][n] = wIn[n] * src[n];
    };
    auto give = [&](int ch, const double* src, double* dst, double sign)
    {
        for (int n = 0; n < len; ++n)
            dst[n] += sign * wOut[n] * (lane[ch][n] - wIn[n] * src[n]);
    };
    switch (v.kind)
    {
    case Voice::Kind::none:
        return;
    case Voice::Kind::echo:
    case Voice::Kind::comb:
        for (int ch = 0; ch < nch; ++ch)
            feed(ch, x[ch]);
        if (v.kind == Voice::Kind::echo)
            echoPool[static_cast<std::size_t>(v.pool)].process(lanes, nch, len);
        else
            combPool[static_cast<std::size_t>(v.pool)].process(lanes, nch, len);
        for (int ch = 0; ch < nch; ++ch)
            give(ch, x[ch], acc[ch], 1.0);
        return;
    case Voice::Kind::sections:
        break;
    }
    const bool stereo = nch >= 2;
    const ChannelMode mode = v.channels;
    if (mode == ChannelMode::both || !stereo)
    {
        if (!stereo && mode == ChannelMode::side)
            return; // a mono signal has no side
        for (int ch = 0; ch < nch; ++ch)
        {
            feed(ch, x[ch]);
            runSections(ch, v.first, v.count, lane[ch], len);
            give(ch, x[ch], acc[ch], 1.0);
        }
        return;
    }
    if (mode == ChannelMode::left || mode == ChannelMode::right)
    {
        const int ch = mode == ChannelMode::left ? 0 : 1;
        feed(ch, x[ch]);
        runSections(ch, v.first, v.count, lane[ch], len);
        give(ch, x[ch], acc[ch], 1.0);
        return;
    }
    // Mid or side: the stage's deviation adds to both channels (with the side's sign).
    double m[K];
    const double sign = mode == ChannelMode::mid ? 1.0 : -1.0;
    for (int n = 0; n < len; ++n)
        m[n] = 0.5 * (x[0][n] + sign * x[1][n]);
    feed(0, m);
    runSections(0, v.first, v.count, lane[0], len);
    give(0, m, acc[0], 1.0);
    give(0, m, acc[1], sign);
}

void ChainProcessor::runFading(int stage, int nch, int len) noexcept
{
    // y = x + (1 - s) G_old((1 - s) x) + G_new(s x), G = H - 1 (Smoothing/Transition.h).
    constexpr int K = kUpdateIntervalSamples;
    Stage& st = stages[static_cast<std::size_t>(stage)];
    double in[K], outIn[K], one[K];
    for (int n = 0; n < len; ++n)
    {
        const double s = transitionCurve(static_cast<double>(st.fadePos + n + 1) /
                                         static_cast<double>(st.fadeLen));
        in[n] = s;
        outIn[n] = 1.0 - s;
        one[n] = 1.0;
    }
    double* x[kMaxChannels] = {};
    double accStore[kMaxChannels][K];
    double* acc[kMaxChannels] = {};
    for (int ch = 0; ch < nch; ++ch)
    {
        x[ch] = channelScratch(ch);
        acc[ch] = accStore[ch];
        for (int n = 0; n < len; ++n)
            acc[ch][n] = x[ch][n];
    }
    addVoice(st.out, outIn, outIn, x, acc, nch, len);
    addVoice(st.live, in, one, x, acc, nch, len);
    for (int ch = 0; ch < nch; ++ch)
        for (int n = 0; n < len; ++n)
            x[ch][n] = acc[ch][n];
    st.fadePos += len;
}

namespace
{
/// Largest magnitude a stage's output may have before it counts as a runaway: +180 dBFS,
/// far beyond any signal (common practice: no audio chain holds such values) and far
/// below where double precision overflows.
constexpr double kRunawayLevel = 1.0e9;

/// True when every sample is a number no larger in magnitude than `limit` (a read-only
/// pass: the largest magnitude, and the sum of v - v, which is NaN exactly when some v is
/// NaN or infinite).
bool allWithin(const double* x, int n, double limit) noexcept
{
#if defined(__SSE2__)
    const __m128d signMask = _mm_set1_pd(-0.0);
    __m128d most = _mm_setzero_pd(), odd = _mm_setzero_pd();
    int i = 0;
    for (; i + 2 <= n; i += 2)
    {
        const __m128d v = _mm_loadu_pd(x + i);
        most = _mm_max_pd(most, _mm_andnot_pd(signMask, v));
        odd = _mm_add_pd(odd, _mm_sub_pd(v, v));
    }
    alignas(16) double m[2], o[2];
    _mm_store_pd(m, most);
    _mm_store_pd(o, odd);
    double largest = std::max(m[0], m[1]), nan = o[0] + o[1];
    for (; i < n; ++i)
    {
        largest = std::max(largest, std::abs(x[i]));
        nan += x[i] - x[i];
    }
    return largest <= limit && nan == 0.0;
#else
    for (int i = 0; i < n; ++i)
        if (!(std::abs(x[i]) <= limit))
            return false;
    return true;
#endif
}
} // namespace

void ChainProcessor::runBlock(int nch, int len) noexcept
{
    double* buf[kMaxChannels];
    for (int ch = 0; ch < nch; ++ch)
        buf[ch] = channelScratch(ch);
    const bool stereo = nch >= 2;
    auto stretchable = [&](const Stage& s)
    {
        return !s.fading && s.live.kind == Voice::Kind::sections &&
               (s.live.channels == ChannelMode::both || !stereo) &&
               !(!stereo && s.live.channels == ChannelMode::side);
    };

    // After each stage (or stretch of stages) a sample that is not a finite number, or so
    // large that it cannot be audio (kRunawayLevel), means that stage ran away: it is
    // silenced and the stage's memories are cleared at once, so no later stage hides it (an
    // echo canceller's own guard would turn it into silence for as long as an earlier
    // stage rings).
    auto scrub = [&](int first, int end)
    {
        bool bad = false;
        for (int ch = 0; ch < nch; ++ch)
            bad = bad || !allWithin(buf[ch], len, kRunawayLevel);
        if (!bad)
            return;
        for (int ch = 0; ch < nch; ++ch)
            for (int n = 0; n < len; ++n)
                buf[ch][n] = std::abs(buf[ch][n]) <= kRunawayLevel ? buf[ch][n] : 0.0;
        clearStageMemories(first, end);
        nonFinite.fetch_add(1, std::memory_order_relaxed);
    };

    int i = 0;
    while (i < numStages)
    {
        const int first = i;
        if (runUnit(i, nch, len, buf, stretchable))
            scrub(first, i);
    }
}

template <typename Stretchable>
bool ChainProcessor::runUnit(int& i, int nch, int len, double* const* buf,
                             const Stretchable& stretchable) noexcept
{
    const bool stereo = nch >= 2;
    const Stage& st = stages[static_cast<std::size_t>(i)];
    if (st.fading)
    {
        runFading(i, nch, len); // always within one update interval (processImpl)
        ++i;
        return true;
    }
    const Voice& v = st.live;
    if (v.kind == Voice::Kind::none)
    {
        ++i;
        return false;
    }
    if (v.kind != Voice::Kind::sections)
    {
        // Echo cancellers and combs work on every channel.
        if (v.kind == Voice::Kind::echo)
            echoPool[static_cast<std::size_t>(v.pool)].process(buf, nch, len);
        else
            combPool[static_cast<std::size_t>(v.pool)].process(buf, nch, len);
        ++i;
        return true;
    }
    const ChannelMode mode = v.channels;
    if (mode == ChannelMode::both || !stereo)
    {
        if (!stereo && mode == ChannelMode::side)
        {
            ++i; // a mono signal has no side
            return false;
        }
        // Consecutive stages on both channels run as one stretch of sections, whose
        // section state lives at fixed per-stage positions.
        int end = i;
        while (end < numStages && stretchable(stages[static_cast<std::size_t>(end)]))
            ++end;
        // Channels two by two through the stereo stretch (memories of channels 2k and
        // 2k + 1 in pairState[k]). A last channel without a partner takes silence in the
        // other lane when that lane belongs to no prepared channel (its memories then stay
        // at zero), so that a mono chain too runs its sections side by side instead of
        // waiting on each section's recursion in turn; otherwise it runs on its own.
        for (int c = 0; c < nch; c += 2)
        {
            if (c + 1 < nch)
                runStereoStretch(i, end, buf[c], buf[c + 1], len, c / 2);
            else if (c + 1 >= channelCount)
            {
                double* silent = channelScratch(c + 1);
                std::fill(silent, silent + len, 0.0);
                runStereoStretch(i, end, buf[c], silent, len, c / 2);
            }
            else
                for (int s = i; s < end; ++s)
                    runSections(c, stages[static_cast<std::size_t>(s)].live.first,
                                stages[static_cast<std::size_t>(s)].live.count, buf[c], len);
        }
        i = end;
        return true;
    }

    const int base = v.first;
    switch (mode)
    {
    case ChannelMode::left:
        runSections(0, base, v.count, buf[0], len);
        break;
    case ChannelMode::right:
        runSections(1, base, v.count, buf[1], len);
        break;
    case ChannelMode::mid:
    case ChannelMode::side:
    {
        double* l = buf[0];
        double* r = buf[1];
        for (int n = 0; n < len; ++n)
        {
            const double m = 0.5 * (l[n] + r[n]);
            const double sd = 0.5 * (l[n] - r[n]);
            l[n] = m;
            r[n] = sd;
        }
        // The mid or side signal uses lane 0's memories.
        runSections(0, base, v.count, mode == ChannelMode::mid ? l : r, len);
        for (int n = 0; n < len; ++n)
        {
            const double m = l[n], sd = r[n];
            l[n] = m + sd;
            r[n] = m - sd;
        }
        break;
    }
    case ChannelMode::both:
        break;
    }
    ++i;
    return true;
}

void ChainProcessor::clearStageMemories(int first, int end) noexcept
{
    auto clearVoice = [this](const Voice& v)
    {
        switch (v.kind)
        {
        case Voice::Kind::none:
            return;
        case Voice::Kind::echo:
            echoPool[static_cast<std::size_t>(v.pool)].reset();
            return;
        case Voice::Kind::comb:
            combPool[static_cast<std::size_t>(v.pool)].reset();
            return;
        case Voice::Kind::sections:
            for (int j = v.first; j < v.first + v.count; ++j)
            {
                for (auto& pair : pairState)
                    pair[static_cast<std::size_t>(j)] = PairState{};
            }
            return;
        }
    };
    for (int i = first; i < end; ++i)
    {
        clearVoice(stages[static_cast<std::size_t>(i)].live);
        clearVoice(stages[static_cast<std::size_t>(i)].out);
    }
}

namespace
{
/// A finite sample of this type (false for NaN and both infinities; a double beyond the
/// float range counts as infinite when the output is float).
template <typename Sample> bool finiteAs(double v) noexcept
{
    return std::abs(v) <= static_cast<double>(std::numeric_limits<Sample>::max());
}

} // namespace

namespace
{
/// True when every sample is a number (v - v is 0 for every finite v and NaN otherwise; a
/// read-only pass, four or two lanes at a time).
bool allFinite(const float* x, int n) noexcept
{
#if defined(__SSE2__)
    __m128 odd = _mm_setzero_ps();
    int i = 0;
    for (; i + 4 <= n; i += 4)
    {
        const __m128 v = _mm_loadu_ps(x + i);
        odd = _mm_add_ps(odd, _mm_sub_ps(v, v));
    }
    alignas(16) float o[4];
    _mm_store_ps(o, odd);
    float sum = (o[0] + o[1]) + (o[2] + o[3]);
    for (; i < n; ++i)
        sum += x[i] - x[i];
    return sum == 0.0f;
#else
    for (int i = 0; i < n; ++i)
        if (!std::isfinite(x[i]))
            return false;
    return true;
#endif
}

bool allFinite(const double* x, int n) noexcept
{
    return allWithin(x, n, std::numeric_limits<double>::max());
}
} // namespace

template <typename Sample> bool silenceNonFinite(Sample* x, int n) noexcept
{
    if (allFinite(x, n))
        return false;
    for (int i = 0; i < n; ++i)
        x[i] = finiteAs<Sample>(static_cast<double>(x[i])) ? x[i] : Sample(0);
    return true;
}
template bool silenceNonFinite<float>(float*, int) noexcept;
template bool silenceNonFinite<double>(double*, int) noexcept;

void ChainProcessor::clearMemories() noexcept
{
    for (auto& pair : pairState)
        for (auto& s : pair)
            s = PairState{};
    for (auto& e : echoPool)
        e.reset();
    for (auto& c : combPool)
        c.reset();
}

template <typename Sample>
void ChainProcessor::processImpl(Sample* const* channels, int numChannels, int numSamples) noexcept
{
    if (scratch.empty() || numSamples <= 0)
        return;
    // Not a number or infinite in the input: processed as silence, and counted (one event
    // per call), whatever the chain holds.
    bool inputFault = false;
    for (int ch = 0; ch < numChannels; ++ch)
        inputFault = silenceNonFinite(channels[ch], numSamples) || inputFault;
    if (inputFault)
        nonFinite.fetch_add(1, std::memory_order_relaxed);
    started = true;
    if (!anyActive && !isMoving())
    {
        clock += numSamples;
        return;
    }
    ScopedNoDenormals noDenormals;
    // Never more channels than prepared: the pooled stages hold state for that many.
    const int nch = std::min(numChannels, channelCount);
    constexpr int K = kUpdateIntervalSamples;
    // Samples stay in double from the first section to the last; only the block's input
    // and output are in the caller's sample type. While anything moves, pieces end at the
    // update points of the processor's own clock, so the output does not depend on how the
    // caller splits its blocks.
    for (int start = 0; start < numSamples;)
    {
        // Updates fall on update points: every one while a target waits or a crossfade runs,
        // otherwise only where some glide has a knot.
        if (isMoving() && clock % K == 0 && (hasPending || everyUpdate || clock >= nextKnot))
            update();
        int len = std::min(blockSize, numSamples - start);
        if (isMoving())
        {
            long long stop = clock + (K - clock % K);
            if (!hasPending && !everyUpdate)
                stop = std::max(stop, nextKnot);
            len = static_cast<int>(std::min<long long>(len, stop - clock));
        }
        if (anyActive)
        {
            for (int ch = 0; ch < nch; ++ch)
            {
                double* b = channelScratch(ch);
                const Sample* x = channels[ch] + start;
                for (int n = 0; n < len; ++n)
                    b[n] = static_cast<double>(x[n]);
            }
            runBlock(nch, len);
            bool outputFault = false;
            for (int ch = 0; ch < nch; ++ch)
            {
                const double* b = channelScratch(ch);
                Sample* x = channels[ch] + start;
                for (int n = 0; n < len; ++n)
                {
                    const bool ok = finiteAs<Sample>(b[n]);
                    outputFault = outputFault || !ok;
                    x[n] = ok ? static_cast<Sample>(b[n]) : Sample(0);
                }
            }
            // A stage ran away (finite input cannot do that to a stable chain, but an
            // enormous one can overflow): silence those samples, clear every memory so the
            // next piece starts from rest, and count it.
            if (outputFault)
            {
                clearMemories();
                nonFinite.fetch_add(1, std::memory_order_relaxed);
            }
        }
        clock += len;
        start += len;
    }
}

void ChainProcessor::process(float* const* channels, int numChannels, int numSamples) noexcept
{
    processImpl(channels, numChannels, numSamples);
}

void ChainProcessor::process(double* const* channels, int numChannels, int numSamples) noexcept
{
    processImpl(channels, numChannels, numSamples);
}

ScopedNoDenormals::ScopedNoDenormals() noexcept
{
#ifdef KERF_HAS_SSE
    saved = _mm_getcsr();
    _mm_setcsr(saved | 0x8040u); // FTZ | DAZ
#endif
}

ScopedNoDenormals::~ScopedNoDenormals() noexcept
{
#ifdef KERF_HAS_SSE
    _mm_setcsr(saved);
#endif
}

} // namespace kerf::dsp
