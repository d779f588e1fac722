# Reference checks of the model-based detectors; each check names its source beside it.
bayline_add_gtest(reference_detect_models
  SOURCES ${CMAKE_CURRENT_LIST_DIR}/bocpd_brute_force_test.cc
  LIBS bayline_est_detect_models
  LABELS reference detect)

# Brown-Durbin-Evans paths and bounds against statsmodels RecursiveLS (Debian python3-statsmodels).
add_executable(bde_probe ${CMAKE_CURRENT_LIST_DIR}/bde_probe.cc)
target_include_directories(bde_probe PRIVATE ${PROJECT_SOURCE_DIR})
target_link_libraries(bde_probe PRIVATE bayline_est_detect_models bayline_est_ls bayline_warnings)
bayline_add_pytest(reference_detect_bde_vs_statsmodels
  test_recursive_cusum_vs_statsmodels.py
  LABELS reference detect)
