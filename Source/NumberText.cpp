#include "NumberText.h"

#include <cmath>
#include <limits>
#include <locale.h>
#include <stdlib.h>
#include <string>

namespace kerf
{

namespace
{

/// JUCE 7.0.5 accumulates the exponent's significant digits in an int: ten of them can
/// exceed 2^31 - 1 (juce_CharacterFunctions.h, readDoubleValue).
constexpr int kJuceExponentDigitsThatOverflow = 10;

/// The pieces of a number at the start of a text, as JUCE's reader would take them.
struct NumberPrefix
{
    bool found = false;    ///< at least one mantissa digit
    bool negative = false; ///< a leading minus sign
    std::string mantissa;  ///< digits and at most one decimal point
    bool hasExponent = false;
    bool negativeExponent = false;
    std::string exponentDigits; ///< significant digits only (leading zeros dropped)
};

bool isSpace(juce::juce_wchar c)
{
    return juce::CharacterFunctions::isWhitespace(c);
}

NumberPrefix scanNumber(const juce::String& text)
{
    NumberPrefix n;
    auto p = text.getCharPointer();
    while (!p.isEmpty() && isSpace(*p))
        ++p;
    if (*p == '-' || *p == '+')
        n.negative = p.getAndAdvance() == '-';
    bool point = false;
    for (;; ++p)
    {
        const auto c = *p;
        if (c >= '0' && c <= '9')
        {
            n.found = true;
            n.mantissa += static_cast<char>(c);
        }
        else if (c == '.' && !point)
        {
            point = true;
            n.mantissa += '.';
        }
        else
            break;
    }
    if (!n.found || (*p != 'e' && *p != 'E'))
        return n;
    ++p;
    if (*p == '-' || *p == '+')
        n.negativeExponent = p.getAndAdvance() == '-';
    if (!(*p >= '0' && *p <= '9'))
        return n; // "2e" or "2e-": the exponent is not part of the number
    n.hasExponent = true;
    for (; *p >= '0' && *p <= '9'; ++p)
        if (*p != '0' || !n.exponentDigits.empty())
            n.exponentDigits += static_cast<char>(*p);
    return n;
}

} // namespace

double readNumber(const juce::String& text)
{
    const auto n = scanNumber(text);
    if (!n.found)
        return 0.0;
    std::string number = n.mantissa;
    if (n.hasExponent)
    {
        // glibc's strtod reads an exponent of any length (saturating to inf or 0); only
        // the pieces scanned above reach it, so no hexadecimal, "inf" or "nan" text does.
        number += n.negativeExponent ? "e-" : "e";
        number += n.exponentDigits.empty() ? std::string("0") : n.exponentDigits;
    }
    // The C locale, so a decimal point is always '.', whatever the host set.
    static const locale_t cLocale = newlocale(LC_ALL_MASK, "C", nullptr);
    double v = strtod_l(number.c_str(), nullptr, cLocale);
    return n.negative ? -v : v;
}

bool overflowsJuceNumberReader(const juce::String& text)
{
    const auto n = scanNumber(text);
    return n.hasExponent &&
           static_cast<int>(n.exponentDigits.size()) >= kJuceExponentDigitsThatOverflow;
}

} // namespace kerf
