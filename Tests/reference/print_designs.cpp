// Prints the high-/low-pass designs of Dsp/Design/PassFilters.h as JSON for
// check_designs_scipy.py: Butterworth orders 1..8, several cutoffs and sample rates, both
// design modes. Output: {"designs": [{"type", "mode", "order", "fc", "fs", "sos": [[b0, b1,
// b2, 1, a1, a2], ...]}]} with 17 significant digits.
#include "Design/PassFilters.h"

#include <cstdio>

using namespace kerf::dsp;

int main()
{
    std::printf("{\"designs\": [\n");
    bool first = true;
    for (const char* type : {"lowpass", "highpass"})
        for (const DesignMode mode : {DesignMode::bilinear, DesignMode::accurate})
            for (const double fs : {44100.0, 48000.0, 96000.0})
                for (const double fc : {30.0, 440.0, 1000.0, 5000.0, 15000.0})
                    for (int order = 1; order <= 8; ++order)
                    {
                        const bool low = type[0] == 'l';
                        const DesignedSections s =
                            low ? designLowPass(fc, order, PassAlignment::butterworth, 0.0, fs,
                                                mode)
                                : designHighPass(fc, order, PassAlignment::butterworth, 0.0, fs,
                                                 mode);
                        std::printf("%s{\"type\": \"%s\", \"mode\": \"%s\", \"order\": %d, "
                                    "\"fc\": %.17g, \"fs\": %.17g, \"sos\": [",
                                    first ? "" : ",\n", type,
                                    mode == DesignMode::bilinear ? "bilinear" : "accurate", order,
                                    fc, fs);
                        first = false;
                        for (int i = 0; i < s.count; ++i)
                        {
                            const BiquadCoeffs& c = s.sections[static_cast<unsigned>(i)];
                            std::printf("%s[%.17g, %.17g, %.17g, 1, %.17g, %.17g]",
                                        i == 0 ? "" : ", ", c.b0, c.b1, c.b2, c.a1, c.a2);
                        }
                        std::printf("]}");
                    }
    std::printf("\n]}\n");
    return 0;
}
