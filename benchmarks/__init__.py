"""Benchmarks, apart from the tests and outside the installed package."""
