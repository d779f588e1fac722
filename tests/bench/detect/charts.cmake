# Per-update cost of the control charts and standardizers: bayline_bench_charts.
if(TARGET bayline_est_detect_charts)
  bayline_add_benchmark(bayline_bench_charts ${CMAKE_CURRENT_LIST_DIR}/charts_bench.cc)
endif()
