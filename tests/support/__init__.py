"""Helpers shared by the tests and the benchmarks: the adversarial-input generator and its judge.

Importable as ``support`` from the tests (pytest puts ``tests/`` on the path)
and from ``bench/fuzz_netlists.py`` (which puts it there itself).
"""
