"""Simulation with known truth and the synthetic demo cohort (tests, benchmarks, ``make demo``).

May import: ``base``, ``recovery``.
(Checked by ``tests/test_layout.py``.)
"""
