"""Per-unit variability of one session: ISI statistics (CV, CV2, LV, LvR, violations),
count Fano factors, the event-aligned Fano time course, and the job that writes them.

May import: ``base``.
(Checked by ``tests/test_layout.py``.)
"""
