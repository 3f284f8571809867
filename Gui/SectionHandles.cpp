#include "SectionHandles.h"

#include "Limits.h"
#include "Parameters.h"
#include "ResponseView.h"

#include <algorithm>
#include <cmath>

namespace kerf
{

namespace
{
using namespace dsp::limits;

// Our own look: pale teal rings on the slate ground; a lozenge for slots with a gain, an
// upright bar on the 0 dB line for slots that only move along frequency.
const juce::Colour kRing(0xff8fd1c4);
const juce::Colour kLit(0xffe9e2cf);
const juce::Colour kGround(0xff1d232a);

juce::String hzText(double hz)
{
    return hz >= 1000.0 ? juce::String(hz / 1000.0, 2) + " kHz" : juce::String(hz, 1) + " Hz";
}
} // namespace

SectionHandles::SectionHandles(ResponseView& v) : view(v)
{
    setInterceptsMouseClicks(true, false);
    setComponentID("sectionHandles");
}

SectionHandles::~SectionHandles()
{
    endGesture(); // an editor closed during a drag
}

void SectionHandles::attach(juce::AudioProcessorValueTreeState& state)
{
    params = &state;
    repaint();
}

bool SectionHandles::typeHasGain(int t) noexcept
{
    // Type choices (Parameters.cpp): 0 peaking, 1 low shelf, 2 high shelf, 8 tilt carry a gain.
    return t == 0 || t == 1 || t == 2 || t == 8;
}

juce::RangedAudioParameter* SectionHandles::param(const juce::String& id) const
{
    return params != nullptr ? params->getParameter(id) : nullptr;
}

std::optional<SectionHandles::Handle> SectionHandles::handleFor(int slot) const
{
    if (params == nullptr || slot < 0 || slot >= kNumSectionSlots)
        return std::nullopt;
    auto value = [this](const juce::String& id)
    {
        const auto* raw = params->getRawParameterValue(id);
        return raw != nullptr ? static_cast<double>(raw->load()) : 0.0;
    };
    if (value(ids::slotOn(slot)) < 0.5)
        return std::nullopt;
    Handle h;
    h.slot = slot;
    h.type = juce::roundToInt(value(ids::slotType(slot)));
    h.hasGain = typeHasGain(h.type);
    h.freqHz = value(ids::slotFreq(slot));
    h.gainDb = value(ids::slotGain(slot));
    h.q = value(ids::slotQ(slot));
    const auto plot = view.plotArea().toFloat();
    h.position = {
        std::clamp(view.xForFrequency(h.freqHz), plot.getX(), plot.getRight()),
        std::clamp(view.yForDb(h.hasGain ? h.gainDb : 0.0), plot.getY(), plot.getBottom())};
    return h;
}

std::vector<SectionHandles::Handle> SectionHandles::handles() const
{
    std::vector<Handle> out;
    for (int s = 0; s < kNumSectionSlots; ++s)
        if (auto h = handleFor(s))
            out.push_back(*h);
    return out;
}

std::optional<int> SectionHandles::slotAt(juce::Point<float> p) const
{
    // The nearest handle within the grab radius (the last drawn wins a tie: it lies on top).
    std::optional<int> best;
    float bestDistance = kGrabRadius;
    for (const auto& h : handles())
    {
        const float d = h.position.getDistanceFrom(p);
        if (d <= bestDistance)
        {
            bestDistance = d;
            best = h.slot;
        }
    }
    return best;
}

juce::String SectionHandles::readout(int slot) const
{
    const auto h = handleFor(slot);
    if (!h)
        return {};
    juce::String text = "Section " + juce::String(slot + 1) + "  " +
                        param(ids::slotType(slot))->getCurrentValueAsText() + "  " +
                        hzText(h->freqHz);
    if (h->hasGain)
        text << "  " << (h->gainDb >= 0.0 ? "+" : "") << juce::String(h->gainDb, 1) << " dB";
    text << "  Q " << juce::String(h->q, 2);
    return text;
}

bool SectionHandles::hitTest(int x, int y)
{
    return view.plotArea().contains(x, y);
}

void SectionHandles::paint(juce::Graphics& g)
{
    if (params == nullptr || view.plotArea().isEmpty())
        return;
    juce::Graphics::ScopedSaveState save(g);
    g.reduceClipRegion(view.plotArea().expanded(1));
    const int lit = dragSlot >= 0 ? dragSlot : hovered;
    g.setFont(10.0f);
    for (const auto& h : handles())
    {
        const bool on = h.slot == lit;
        const auto c = h.position;
        juce::Path shape;
        if (h.hasGain)
        {
            const float r = on ? 7.5f : 6.0f;
            shape.addQuadrilateral(c.x, c.y - r, c.x + r, c.y, c.x, c.y + r, c.x - r, c.y);
        }
        else
        {
            const float w = on ? 5.0f : 4.0f, half = on ? 9.0f : 7.5f;
            shape.addRoundedRectangle(c.x - 0.5f * w, c.y - half, w, 2.0f * half, 0.5f * w);
        }
        g.setColour(on ? kLit : kGround.withAlpha(0.75f));
        g.fillPath(shape);
        g.setColour(on ? kLit : kRing);
        g.strokePath(shape, juce::PathStrokeType(on ? 2.0f : 1.4f));
        g.setColour(kRing.withAlpha(0.9f));
        g.drawText(juce::String(h.slot + 1), juce::roundToInt(c.x) - 10, juce::roundToInt(c.y) - 22,
                   20, 11, juce::Justification::centred);
    }
    if (lit >= 0)
        if (const auto h = handleFor(lit))
        {
            const auto text = readout(lit);
            g.setFont(11.0f);
            const int w = g.getCurrentFont().getStringWidth(text) + 10;
            const auto plot = view.plotArea();
            const int x = std::clamp(juce::roundToInt(h->position.x) - w / 2, plot.getX(),
                                     std::max(plot.getX(), plot.getRight() - w));
            int y = juce::roundToInt(h->position.y) + 14;
            if (y + 16 > plot.getBottom())
                y = juce::roundToInt(h->position.y) - 40;
            g.setColour(kGround.withAlpha(0.88f));
            g.fillRoundedRectangle(juce::Rectangle<int>(x, y, w, 16).toFloat(), 3.0f);
            g.setColour(kLit);
            g.drawText(text, x, y, w, 16, juce::Justification::centred);
        }
}

void SectionHandles::mouseMove(const juce::MouseEvent& e)
{
    const int now = slotAt(e.position).value_or(-1);
    if (now != hovered)
    {
        hovered = now;
        repaint();
    }
}

void SectionHandles::mouseExit(const juce::MouseEvent&)
{
    if (hovered >= 0 && dragSlot < 0)
    {
        hovered = -1;
        repaint();
    }
}

void SectionHandles::beginGesture(std::initializer_list<juce::RangedAudioParameter*> ps)
{
    for (auto* p : ps)
        if (p != nullptr && std::find(inGesture.begin(), inGesture.end(), p) == inGesture.end())
        {
            p->beginChangeGesture();
            inGesture.push_back(p);
        }
}

void SectionHandles::endGesture()
{
    // Closed in reverse; the edit history records one step when the last one closes.
    for (auto it = inGesture.rbegin(); it != inGesture.rend(); ++it)
        (*it)->endChangeGesture();
    inGesture.clear();
}

void SectionHandles::set(juce::RangedAudioParameter* p, double value)
{
    if (p == nullptr)
        return;
    const float normalised = p->convertTo0to1(static_cast<float>(value));
    if (normalised != p->getValue())
        p->setValueNotifyingHost(normalised);
}

void SectionHandles::mouseDown(const juce::MouseEvent& e)
{
    endGesture(); // a drag that lost its mouse-up
    dragSlot = -1;
    const auto slot = slotAt(e.position);
    const auto h = slot ? handleFor(*slot) : std::nullopt;
    if (!h)
        return;
    dragSlot = h->slot;
    dragQ = e.mods.isAltDown();
    grabOffset = h->position - e.position;
    startQ = h->q;
    repaint();
}

void SectionHandles::mouseDrag(const juce::MouseEvent& e)
{
    const auto h = handleFor(dragSlot);
    if (!h)
        return;
    if (dragQ)
    {
        // Upwards raises Q: doubles every kPixelsPerQDoubling px.
        const double dy = e.position.y - e.mouseDownPosition.y;
        auto* q = param(ids::slotQ(dragSlot));
        beginGesture({q});
        set(q, std::clamp(startQ * std::exp2(-dy / kPixelsPerQDoubling), kQMin, kQMax));
        repaint();
        return;
    }
    const auto plot = view.plotArea().toFloat();
    const auto target = e.position + grabOffset;
    const double x = std::clamp(target.x, plot.getX(), plot.getRight());
    auto* freq = param(ids::slotFreq(dragSlot));
    auto* gain = h->hasGain ? param(ids::slotGain(dragSlot)) : nullptr;
    beginGesture({freq, gain});
    set(freq, std::clamp(view.frequencyForX(x), kFreqMinHz, kFreqMaxHz));
    if (gain != nullptr)
        set(gain, std::clamp(view.dbForY(target.y), kGainMinDb, kGainMaxDb));
    repaint();
}

void SectionHandles::mouseUp(const juce::MouseEvent& e)
{
    endGesture();
    dragSlot = -1;
    hovered = slotAt(e.position).value_or(-1);
    repaint();
}

void SectionHandles::mouseDoubleClick(const juce::MouseEvent& e)
{
    const auto slot = slotAt(e.position);
    if (!slot)
        return;
    endGesture();
    auto* freq = param(ids::slotFreq(*slot));
    auto* gain = param(ids::slotGain(*slot));
    auto* q = param(ids::slotQ(*slot));
    beginGesture({freq, gain, q});
    for (auto* p : {freq, gain, q})
        if (p != nullptr && p->getValue() != p->getDefaultValue())
            p->setValueNotifyingHost(p->getDefaultValue());
    endGesture();
    repaint();
}

void SectionHandles::mouseWheelMove(const juce::MouseEvent& e, const juce::MouseWheelDetails& w)
{
    const auto slot = slotAt(e.position);
    const auto h = slot ? handleFor(*slot) : std::nullopt;
    if (!h || w.deltaY == 0.0f || dragSlot >= 0)
    {
        Component::mouseWheelMove(e, w); // not ours: the parent's
        return;
    }
    // A wheel notch is one step; a smooth (touchpad) scroll counts 0.2 as a notch.
    const double notches = w.isSmooth ? w.deltaY / 0.2 : (w.deltaY > 0.0f ? 1.0 : -1.0);
    auto* q = param(ids::slotQ(*slot));
    beginGesture({q});
    set(q, std::clamp(h->q * std::pow(kWheelQFactor, notches), kQMin, kQMax));
    endGesture();
    repaint();
}

} // namespace kerf
