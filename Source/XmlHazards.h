#pragma once

#include <cstddef>
#include <cstring>

namespace kerf
{

/// Deepest element nesting Kerf lets JUCE's XML reader see. JUCE 7.0.5's reader
/// (juce::XmlDocument) goes one call deeper for every nested element (readNextElement ->
/// readChildElements), about 200 - 400 bytes of stack a level in a release build: an iXML
/// chunk nested 40000 deep crashed `kerf render` on the main thread's 8 MiB, and a host
/// may restore a plugin's state on a thread with far less. Kerf's own state nests 3 deep;
/// broadcast-wave metadata (iXML, axml) a dozen or so (common practice). 256 levels take
/// at most about 100 KiB.
constexpr int kMaxXmlNesting = 256;

/// What a scan of XML text found (scanXml).
struct XmlScan
{
    int deepest = 0;                // nesting counted from above, stopped past the limit
    bool instructionInside = false; // a processing instruction ("<?") inside an element
};

/// Scans the XML text [text, text + length) for what JUCE's reader cannot safely read.
/// Nesting is counted from above: every '<' that opens an element goes one deeper, every
/// "</" and every tag that ends in "/>" one back (never below the top: past it JUCE's
/// reader has finished its one root element); comments, CDATA sections, processing
/// instructions and declarations are skipped, and quoted attribute values are stepped over
/// (a "/>" or '>' inside one counts for nothing). JUCE's reader can only go deeper where
/// this counts an opening tag, so it never reaches deeper than `deepest`. The scan stops
/// once `deepest` exceeds `limit`. A processing instruction inside an element is flagged:
/// JUCE 7.0.5's reader skips it as white space, then, finding text after it, steps back to
/// before it to read the text, meets the '<' and stops the text, and so loops for good
/// (XmlDocument::readChildElements; `<a><?x?>text</a>` never returns). Linear in `length`,
/// no recursion, no allocation.
inline XmlScan scanXml(const char* text, std::size_t length, int limit) noexcept
{
    const char* p = text;
    const char* const end = text + length;
    auto startsWith = [&](const char* s)
    {
        const std::size_t n = std::strlen(s);
        return static_cast<std::size_t>(end - p) >= n && std::memcmp(p, s, n) == 0;
    };
    auto skipPast = [&](const char* s)
    {
        const std::size_t n = std::strlen(s);
        while (p < end && !startsWith(s))
            ++p;
        p = static_cast<std::size_t>(end - p) >= n ? p + n : end;
    };
    XmlScan scan;
    int depth = 0;
    while (p < end)
    {
        if (*p != '<')
        {
            ++p;
            continue;
        }
        if (startsWith("<!--"))
            skipPast("-->");
        else if (startsWith("<![CDATA["))
            skipPast("]]>");
        else if (startsWith("<?"))
        {
            scan.instructionInside = scan.instructionInside || depth > 0;
            skipPast("?>");
        }
        else if (startsWith("<!"))
            skipPast(">");
        else if (startsWith("</"))
        {
            depth = depth > 0 ? depth - 1 : 0;
            skipPast(">");
        }
        else
        {
            if (++depth > scan.deepest)
                scan.deepest = depth;
            if (depth > limit)
                return scan;
            // The tag up to its '>', stepping over quoted values.
            bool selfClosing = false;
            for (++p; p < end && *p != '>'; ++p)
            {
                if (*p == '"' || *p == '\'')
                {
                    const char quote = *p++;
                    while (p < end && *p != quote)
                        ++p;
                    if (p == end)
                        break;
                }
                selfClosing = *p == '/';
            }
            if (p < end)
                ++p;
            if (selfClosing)
                --depth; // the '<' that opened it counted one
        }
    }
    return scan;
}

/// What in the XML text JUCE's reader cannot safely read (too deep a nesting, a processing
/// instruction inside an element), in words, or nullptr when there is nothing.
inline const char* xmlHazard(const char* text, std::size_t length) noexcept
{
    const XmlScan scan = scanXml(text, length, kMaxXmlNesting);
    if (scan.deepest > kMaxXmlNesting)
        return "elements nested more than 256 deep";
    if (scan.instructionInside)
        return "a processing instruction inside an element";
    return nullptr;
}
static_assert(kMaxXmlNesting == 256, "xmlHazard's message names the limit");

} // namespace kerf
