# The click-free layer's cost: gliding against static (DSP only, no JUCE).
add_executable(kerf_smoothing_bench ${CMAKE_CURRENT_LIST_DIR}/SmoothingBench.cpp)
target_link_libraries(kerf_smoothing_bench PRIVATE kerf_dsp benchmark::benchmark)

# Denormals: a ringing feedback comb in silence against the loud part (DSP only).
add_executable(kerf_denormal_bench ${CMAKE_CURRENT_LIST_DIR}/DenormalBench.cpp)
target_link_libraries(kerf_denormal_bench PRIVATE kerf_dsp benchmark::benchmark)
