# Test sources of kerf_dsp_tests (the DSP core's tests, built without JUCE).
set(KERF_DSP_TEST_SOURCES
  ${CMAKE_CURRENT_LIST_DIR}/PeakingDesignTests.cpp
  ${CMAKE_CURRENT_LIST_DIR}/SectionDesignTests.cpp
  ${CMAKE_CURRENT_LIST_DIR}/SystemFunctionTests.cpp)
list(APPEND KERF_DSP_TEST_SOURCES
  ${CMAKE_CURRENT_LIST_DIR}/CombTests.cpp
  ${CMAKE_CURRENT_LIST_DIR}/EchoCancellerTests.cpp
  ${CMAKE_CURRENT_LIST_DIR}/EchoEstimatorTests.cpp)
list(APPEND KERF_DSP_TEST_SOURCES ${CMAKE_CURRENT_LIST_DIR}/SmoothingTests.cpp
  ${CMAKE_CURRENT_LIST_DIR}/RobustnessTests.cpp)
list(APPEND KERF_DSP_TEST_SOURCES ${CMAKE_CURRENT_LIST_DIR}/ExtremesTests.cpp
  ${CMAKE_CURRENT_LIST_DIR}/SoakTests.cpp ${CMAKE_CURRENT_LIST_DIR}/AllocationHook.cpp)
