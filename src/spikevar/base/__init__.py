"""Foundations every stage shares: the user-error type, safe Parquet reading and writing,
the one order of unit ids, and the in-memory spike arrays of a session.

May import: nothing else in spikevar.
(Checked by ``tests/test_layout.py``.)
"""
