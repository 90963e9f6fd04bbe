"""Cohort assembly, group statistics and hand-off: streamed cohort tables, the hierarchical
bootstrap, group summaries and differences, the data dictionary, Data Package and manifest.

May import: ``base``, ``metrics``, ``recovery``, ``population``.
(Checked by ``tests/test_layout.py``.)
"""
