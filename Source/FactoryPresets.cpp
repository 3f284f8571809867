#include "FactoryPresets.h"

#include "KerfPresetData.h"

namespace kerf
{

const juce::Array<FactoryPreset>& factoryPresets()
{
    static const juce::Array<FactoryPreset> presets = []
    {
        juce::Array<FactoryPreset> list;
        for (int i = 0; i < KerfPresetData::namedResourceListSize; ++i)
        {
            int size = 0;
            const char* data =
                KerfPresetData::getNamedResource(KerfPresetData::namedResourceList[i], size);
            const juce::String fileName = KerfPresetData::getNamedResourceOriginalFilename(
                KerfPresetData::namedResourceList[i]);
            const auto parsed = parseChainBytes(data, static_cast<std::size_t>(size));
            jassert(parsed.ok);
            if (!parsed.ok)
                continue;
            FactoryPreset p;
            p.fileName = fileName;
            p.name = parsed.name.isNotEmpty() ? parsed.name
                                              : fileName.upToLastOccurrenceOf(".", false, false);
            p.chain = parsed.chain;
            list.add(p);
        }
        std::sort(list.begin(), list.end(),
                  [](const FactoryPreset& a, const FactoryPreset& b)
                  { return a.fileName < b.fileName; });
        return list;
    }();
    return presets;
}

} // namespace kerf
