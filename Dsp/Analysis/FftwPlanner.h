#pragma once
// FFTW's planner (plan creation and destruction) is not thread-safe; fftw_execute on a plan's
// own arrays is. Every FFTW plan in Kerf is made and destroyed under this one mutex.
#include <mutex>

namespace kerf::dsp
{

/// The process-wide lock around fftw_plan_* and fftw_destroy_plan.
inline std::mutex& fftwPlannerMutex()
{
    static std::mutex m;
    return m;
}

} // namespace kerf::dsp
