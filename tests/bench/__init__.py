"""Benchmark scripts (not tests): each prints ratios against a reference in one run."""
