"""Refractory recovery: closed forms of the hazard models, maximum-likelihood fits with
intervals and goodness of fit, the slow-rate weights, and the session ``recovery`` table.

May import: ``base``.
(Checked by ``tests/test_layout.py``.)
"""
