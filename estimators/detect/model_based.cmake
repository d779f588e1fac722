# Model-based change detectors: Bayesian online changepoint detection, Brown-Durbin-Evans
# recursive-residual CUSUM / CUSUM-of-squares, and the parameter tolerance band.
bayline_estimator_library(bayline_est_detect_models
  ${CMAKE_CURRENT_LIST_DIR}/bocpd.cc
  ${CMAKE_CURRENT_LIST_DIR}/recursive_residual_tests.cc
  ${CMAKE_CURRENT_LIST_DIR}/band.cc
)
target_link_libraries(bayline_est_detect_models PUBLIC bayline_est_core)
