// libFuzzer target: chain-file JSON (kerf::parseChainJson). Promises: FuzzChecks.h.
#include "FuzzChecks.h"

#include <cstdio>
#include <cstdlib>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size)
{
    const auto outcome = kerf::fuzz::checkChainFile(data, size);
    if (outcome.violation.isNotEmpty())
    {
        std::fprintf(stderr, "kerf_fuzz_chain_file: %s\n", outcome.violation.toRawUTF8());
        std::abort();
    }
    return 0;
}
