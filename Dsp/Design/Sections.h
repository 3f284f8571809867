#pragma once
// Shared vocabulary of the section designs: the design mode and a fixed list of sections.
#include "Biquad.h"

#include <array>

namespace kerf::dsp
{

/// How a section is carried from its analog prototype to the sample rate:
/// `accurate` follows the prototype's magnitude up to Nyquist (per-type method in its
/// header), `bilinear` is the classic Audio EQ Cookbook / bilinear-transform form.
enum class DesignMode
{
    accurate,
    bilinear,
};

/// The most second-order sections one design returns (an 8th-order high-/low-pass).
inline constexpr int kMaxDesignSections = 4;

/// A cascade of up to kMaxDesignSections sections; the design's H(z) is their product.
struct DesignedSections
{
    std::array<BiquadCoeffs, kMaxDesignSections> sections{};
    int count = 0;

    /// Appends a section (ignored when full, which no design in Dsp/Design/ reaches).
    constexpr void push(const BiquadCoeffs& c) noexcept
    {
        if (count < kMaxDesignSections)
            sections[static_cast<unsigned>(count++)] = c;
    }
};

} // namespace kerf::dsp
