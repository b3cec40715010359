"""Benchmark harness (`make bench`): speed and memory, never part of the test suite."""
