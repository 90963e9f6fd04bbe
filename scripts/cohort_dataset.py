"""Rule cohort_dataset: one per-session table as a partitioned cohort dataset (file per session)."""

import logging
import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.cohort.tables import assemble_cohort_dataset  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="cohort_table") as sm:  # noqa: F821
    meta = sm.params.metadata
    rows = assemble_cohort_dataset(
        dict(zip(sm.params.sessions, sm.input, strict=True)),
        meta["rows"],
        meta_columns=meta["columns"],
        output=sm.output[0],
    )
    logging.getLogger(__name__).info("cohort dataset %s: %d rows from %d sessions",
                                     sm.wildcards.table, rows, len(sm.input))
