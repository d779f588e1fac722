# Reference checks of the model-based detectors; each check names its source beside it.
bayline_add_gtest(reference_detect_models
  SOURCES ${CMAKE_CURRENT_LIST_DIR}/bocpd_brute_force_test.cc
  LIBS bayline_est_detect_models
  LABELS reference detect)
