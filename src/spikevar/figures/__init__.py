"""Figures: our figure style, the per-session recovery figure and the cohort figure set.

May import: ``base``, ``metrics``, ``recovery``, ``population``, ``cohort``.
(Checked by ``tests/test_layout.py``.)
"""
