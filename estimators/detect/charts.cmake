# bayline_est_detect_charts: control charts (cusum, ewma, page_hinkley, glr), standardizers
# (self-starting, recursive residual, known parameters), ARL computation and threshold calibration.
bayline_estimator_library(bayline_est_detect_charts
  ${CMAKE_CURRENT_LIST_DIR}/cusum.cc
  ${CMAKE_CURRENT_LIST_DIR}/ewma.cc
  ${CMAKE_CURRENT_LIST_DIR}/page_hinkley.cc
  ${CMAKE_CURRENT_LIST_DIR}/glr.cc
  ${CMAKE_CURRENT_LIST_DIR}/self_starting.cc
  ${CMAKE_CURRENT_LIST_DIR}/arl.cc
  ${CMAKE_CURRENT_LIST_DIR}/calibration.cc
)
if(TARGET bayline_est_detect_charts)
  target_link_libraries(bayline_est_detect_charts PUBLIC bayline_est_core)
endif()
