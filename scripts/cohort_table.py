"""Rules cohort_table and cohort_dataset: one per-session table over every session, with sheet
metadata (a single file, or a folder of one file per session for the tables that grow with
pairs or windows)."""

import logging
import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.cohort.tables import run_cohort_table  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="cohort_table") as sm:  # noqa: F821
    selection = list(sm.input.get("selection", []))
    rows = run_cohort_table(sm.wildcards.table, dict(zip(sm.params.sessions, sm.input.tables,
                                                         strict=True)),
                            sm.params.metadata, output=sm.output.parquet,
                            csv_output=sm.output.get("csv") or None,
                            selections=dict(zip(sm.params.sessions, selection, strict=True))
                            if selection else None)
    logging.getLogger(__name__).info("cohort %s: %d rows from %d sessions", sm.wildcards.table,
                                     rows, len(sm.input.tables))
