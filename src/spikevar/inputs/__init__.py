"""Reading and normalising raw inputs: the sessions sheet, spike and event tables in their
formats (CSV/TSV, Parquet, NWB), time-unit conversion, and ingestion of one session into its
normalised ``spikes``/``events`` Parquet tables.

May import: ``base``.
(Checked by ``tests/test_layout.py``.)
"""
