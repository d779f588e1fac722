# Unit tests for the control charts, standardizers, ARL computation and calibration
# (bayline_est_detect_charts). Every test suite is named Charts*: `ctest -R Charts`.
if(TARGET bayline_est_detect_charts)
  bayline_add_gtest(bayline_charts_unit_test
    SOURCES
      ${CMAKE_CURRENT_LIST_DIR}/chart_contract_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/cusum_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/ewma_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/page_hinkley_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/glr_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/self_starting_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/arl_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/calibration_test.cc
    LIBS bayline_est_detect_charts
    LABELS unit detect)
endif()
