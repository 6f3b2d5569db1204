"""Benchmark scripts (not tests); see DEVELOPERS.md."""
