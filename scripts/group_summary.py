"""Rule group_summary: hierarchical-bootstrap summaries and differences of unit metrics."""

import os
import sys
from pathlib import Path

# one job = one core: keep BLAS single-threaded (set before numpy is imported)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.cohort.run import run_group_summary  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

sm = snakemake  # noqa: F821
with rule_job(sm.log[0], name="group_summary"):
    run_group_summary(units=sm.input.units, count_fano=sm.input.count_fano,
                      recovery=sm.input.recovery, summary_out=sm.output.summary,
                      differences_out=sm.output.differences, n_boot=sm.params.n_boot,
                      seed=sm.params.seed)
