# Benchmarks of the model-based detectors (run by `make bench`, never by ctest).
bayline_add_benchmark(bayline_bench_models ${CMAKE_CURRENT_LIST_DIR}/bench_models.cc)
