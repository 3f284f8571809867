#pragma once

#include <algorithm>
#include <cstddef>
#include <string>
#include <utility>
#include <vector>

namespace kerf
{

/// Deepest element nesting plainXmlProblem accepts. JUCE 7.0.5's XML reader goes one call
/// deeper for every nested element (about 200 - 400 bytes of stack a level in a release
/// build), and a host may restore a plugin's state on a thread with little stack; Kerf's own
/// state nests 3 deep. 256 levels take at most about 100 KiB.
constexpr int kMaxXmlNesting = 256;

/// Why `text` (up to `length` bytes or its first NUL) is not XML of the plain form Kerf
/// writes, or an empty string when it is. JUCE 7.0.5's XML reader (juce::XmlDocument) is
/// lenient, and some of what it takes breaks it: it recurses once per level of nesting (a
/// saved state 100000 deep overflowed the stack), and it loops for good on a processing
/// instruction inside an element that text follows (it skips the instruction as white
/// space, then steps back before it to read the text: `<a><?x?>t</a>` never returns; a
/// fuzzed state found a way to it past a looser check). So the text is checked first,
/// without recursion, against a strict subset of XML 1.0 (W3C Recommendation, 5th edition,
/// 2008: well-formed, no document type declaration, no processing instruction but the XML
/// declaration at the very start, only the predefined references and character references
/// to Unicode scalar values), in this order: an optional declaration, comments and white
/// space, one root element, then comments and white space. Elements: an ASCII name
/// ([A-Za-z_:][A-Za-z0-9_:.-]*), attributes as name="value" or name='value' separated by white
/// space (values without '<'), content of text, references, CDATA sections, comments and elements,
/// closed by an end tag of the same name; at most `maxDepth` levels. JUCE reads such text as
/// XML 1.0 does, so what passes cannot take its reader deeper than `maxDepth` or into the loop.
/// `deepest`, if given, receives the nesting of an accepted text.
inline std::string plainXmlProblem(const char* text, std::size_t length,
                                   int maxDepth = kMaxXmlNesting, int* deepest = nullptr)
{
    std::size_t i = 0;
    for (std::size_t k = 0; k < length; ++k)
        if (text[k] == '\0')
        {
            length = k;
            break;
        }
    auto at = [&](std::size_t k) { return k < length ? text[k] : '\0'; };
    auto startsWith = [&](const char* s)
    {
        for (std::size_t k = 0; s[k] != '\0'; ++k)
            if (at(i + k) != s[k])
                return false;
        return true;
    };
    auto where = [&](const char* what)
    { return std::string(what) + " at byte " + std::to_string(i); };
    auto isSpace = [](char c) { return c == ' ' || c == '\t' || c == '\n' || c == '\r'; };
    auto skipSpace = [&]
    {
        while (i < length && isSpace(text[i]))
            ++i;
    };
    auto nameStart = [](char c)
    { return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '_' || c == ':'; };
    auto nameChar = [&](char c)
    { return nameStart(c) || (c >= '0' && c <= '9') || c == '.' || c == '-'; };
    // Past a name; false when none starts here.
    auto name = [&]
    {
        if (!nameStart(at(i)))
            return false;
        while (nameChar(at(i)))
            ++i;
        return true;
    };
    // Past a reference (at '&'); false when it is not one of XML's own.
    auto reference = [&]
    {
        for (const char* r : {"&amp;", "&lt;", "&gt;", "&quot;", "&apos;"})
            if (startsWith(r))
            {
                i += std::char_traits<char>::length(r);
                return true;
            }
        if (!startsWith("&#"))
            return false;
        // A character reference must name a Unicode scalar value (U+0001 - U+10FFFF, no
        // surrogates): JUCE's reader writes whatever number it reads as a character, and
        // past U+10FFFF that is not UTF-8 (a lead byte announcing more bytes than follow).
        // JUCE's writer uses such references for every character it does not print as it
        // is, control characters included (which XML 1.0, 2.2, would not allow), so they
        // must read back.
        i += 2;
        const bool hex = at(i) == 'x';
        i += hex ? 1 : 0;
        unsigned long code = 0;
        std::size_t digits = 0;
        for (char c = at(i);; c = at(++i))
        {
            int v = -1;
            if (c >= '0' && c <= '9')
                v = c - '0';
            else if (hex && c >= 'a' && c <= 'f')
                v = c - 'a' + 10;
            else if (hex && c >= 'A' && c <= 'F')
                v = c - 'A' + 10;
            if (v < 0)
                break;
            if (++digits > 8)
                return false;
            code = code * (hex ? 16 : 10) + static_cast<unsigned long>(v);
        }
        const bool allowed = code >= 1 && code <= 0x10FFFF && !(code >= 0xD800 && code <= 0xDFFF);
        if (digits == 0 || !allowed || at(i) != ';')
            return false;
        ++i;
        return true;
    };
    // Past a comment (at "<!--"); false when it does not end.
    auto comment = [&]
    {
        for (i += 4; i < length; ++i)
            if (startsWith("-->"))
            {
                i += 3;
                return true;
            }
        return false;
    };
    // Comments and white space (before and after the root).
    auto misc = [&]() -> std::string
    {
        for (skipSpace(); startsWith("<!--"); skipSpace())
            if (!comment())
                return where("an unterminated comment");
        return {};
    };

    skipSpace();
    if (startsWith("<?xml") && isSpace(at(i + 5)))
    {
        for (i += 5; i < length && !startsWith("?>"); ++i)
            if (text[i] == '<')
                return where("a '<' in the XML declaration");
        if (i >= length)
            return "an unterminated XML declaration";
        i += 2;
    }
    if (auto problem = misc(); !problem.empty())
        return problem;
    if (at(i) != '<')
        return where("no root element");

    std::vector<std::pair<std::size_t, std::size_t>> open; // names of the open elements
    int most = 0;
    while (true)
    {
        // At '<' of a start tag.
        ++i;
        const std::size_t nameAt = i;
        if (!name())
            return where("an element without a name");
        if (static_cast<int>(open.size()) >= maxDepth)
            return "elements nested more than " + std::to_string(maxDepth) + " deep";
        open.emplace_back(nameAt, i - nameAt);
        most = std::max(most, static_cast<int>(open.size()));
        bool empty = false;
        while (true)
        {
            const std::size_t before = i;
            skipSpace();
            if (startsWith("/>"))
            {
                i += 2;
                empty = true;
                break;
            }
            if (at(i) == '>')
            {
                ++i;
                break;
            }
            if (i == before)
                return where("an attribute not set off by white space");
            if (!name())
                return where("something other than an attribute in a tag");
            skipSpace();
            if (at(i) != '=')
                return where("an attribute without '='");
            ++i;
            skipSpace();
            const char quote = at(i);
            if (quote != '"' && quote != '\'')
                return where("an attribute value without quotes");
            for (++i; at(i) != quote;)
            {
                if (i >= length)
                    return "an unterminated attribute value";
                if (text[i] == '<')
                    return where("a '<' in an attribute value");
                if (text[i] != '&')
                    ++i;
                else if (!reference())
                    return where("an unknown reference in an attribute value");
            }
            ++i;
        }
        if (empty)
            open.pop_back();
        // Content up to the next start tag, or out through end tags.
        while (!open.empty())
        {
            if (i >= length)
                return "an element that is not closed";
            if (text[i] == '&')
            {
                if (!reference())
                    return where("an unknown reference");
            }
            else if (text[i] != '<')
                ++i;
            else if (startsWith("<!--"))
            {
                if (!comment())
                    return where("an unterminated comment");
            }
            else if (startsWith("<![CDATA["))
            {
                i += 9;
                while (i < length && !startsWith("]]>"))
                    ++i;
                if (i >= length)
                    return "an unterminated CDATA section";
                i += 3;
            }
            else if (startsWith("</"))
            {
                i += 2;
                const std::size_t endAt = i;
                if (!name() || i - endAt != open.back().second ||
                    std::char_traits<char>::compare(text + endAt, text + open.back().first,
                                                    open.back().second) != 0)
                    return where("an end tag that does not match its element");
                skipSpace();
                if (at(i) != '>')
                    return where("an unterminated end tag");
                ++i;
                open.pop_back();
            }
            else
                break; // a start tag (or something that is none, refused above)
        }
        if (open.empty())
            break;
    }
    if (auto problem = misc(); !problem.empty())
        return problem;
    if (i < length)
        return where("something after the root element");
    if (deepest != nullptr)
        *deepest = most;
    return {};
}

} // namespace kerf
