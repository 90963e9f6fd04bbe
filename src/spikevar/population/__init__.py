"""Population statistics across units: regression and mean-matched population Fano factors
(and, as it grows, shared variability).

May import: ``base``, ``metrics``.
(Checked by ``tests/test_layout.py``.)
"""
