"""Benchmarks: each bench_<topic>.py measures side by side in one run and returns rows of ratios."""
