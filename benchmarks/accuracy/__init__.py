"""Published ¹H development set and scores of the accuracy benchmark (benchmarks/bench_accuracy.py)."""
