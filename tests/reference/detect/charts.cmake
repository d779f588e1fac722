# Reference checks for the control charts and their calibration (bayline_est_detect_charts). Every
# check names its source beside it. Test names start with Charts: `ctest -R Charts`.
if(TARGET bayline_est_detect_charts)
  bayline_add_gtest(bayline_charts_reference_test
    SOURCES
      ${CMAKE_CURRENT_LIST_DIR}/arl_reference_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/self_starting_reference_test.cc
      ${CMAKE_CURRENT_LIST_DIR}/simulated_thresholds_reference_test.cc
    LIBS bayline_est_detect_charts
    LABELS reference detect)

  # The self-started regression chart on the project's own RLS, when that library is part of the build.
  if(TARGET bayline_est_ls)
    bayline_add_gtest(bayline_charts_rls_reference_test
      SOURCES ${CMAKE_CURRENT_LIST_DIR}/self_starting_rls_reference_test.cc
      LIBS bayline_est_detect_charts bayline_est_ls
      LABELS reference detect)
  endif()

  # Probe printing our ARLs and calibrated settings for the live comparison with R's spc package.
  add_executable(bayline_charts_probe ${CMAKE_CURRENT_LIST_DIR}/charts_probe.cc)
  target_link_libraries(bayline_charts_probe PRIVATE bayline_est_detect_charts bayline_warnings)
  bayline_add_rtest(ChartsSpcReference charts_spc_test.R)
  set_tests_properties(ChartsSpcReference PROPERTIES LABELS "reference;detect")
endif()
