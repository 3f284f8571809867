# Benchmarks of the parametric sections (issue bars: vs JUCE IIR filters and magnitudes).
if(KERF_WITH_JUCE)
  add_executable(kerf_section_bench ${CMAKE_CURRENT_LIST_DIR}/SectionBench.cpp)
  target_link_libraries(kerf_section_bench PRIVATE kerf_app benchmark::benchmark)
endif()
