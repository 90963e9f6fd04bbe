"""Rule cohort_table: one per-session table concatenated over sessions, with sheet metadata."""

import os
import sys
from pathlib import Path

# one job = one core: keep BLAS single-threaded (set before numpy is imported)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.cohort.tables import assemble_cohort_table  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

sm = snakemake  # noqa: F821
with rule_job(sm.log[0], name="cohort_table") as log:
    meta = sm.params.metadata
    rows = assemble_cohort_table(
        dict(zip(sm.params.sessions, sm.input, strict=True)),
        meta["rows"],
        meta_columns=meta["columns"],
        output=sm.output.parquet,
        csv_output=sm.output.get("csv") or None,
    )
    log.info("cohort %s: %d rows from %d sessions", sm.wildcards.table, rows, len(sm.input))
