# The click-free layer's cost: gliding against static (DSP only, no JUCE).
add_executable(kerf_smoothing_bench ${CMAKE_CURRENT_LIST_DIR}/SmoothingBench.cpp)
target_link_libraries(kerf_smoothing_bench PRIVATE kerf_dsp benchmark::benchmark)
