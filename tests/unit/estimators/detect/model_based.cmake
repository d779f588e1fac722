# Unit tests of the model-based detectors (bocpd, recursive-residual tests, band) and of the
# estimator's reaction to an alarm (RLS uncertainty inflation).
bayline_add_gtest(unit_detect_models
  SOURCES ${CMAKE_CURRENT_LIST_DIR}/bocpd_test.cc
          ${CMAKE_CURRENT_LIST_DIR}/recursive_residual_tests_test.cc
          ${CMAKE_CURRENT_LIST_DIR}/band_test.cc
          ${CMAKE_CURRENT_LIST_DIR}/alarm_reaction_test.cc
  LIBS bayline_est_detect_models bayline_est_ls bayline_est_detect_charts
  LABELS unit detect)
