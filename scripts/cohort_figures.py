"""Rule cohort_figures: the cohort figure set (PNG + SVG)."""

import os
import sys
from pathlib import Path

# one job = one core: keep BLAS single-threaded (set before numpy is imported)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.figures.run import run_cohort_figures  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

sm = snakemake  # noqa: F821
with rule_job(sm.log[0], name="cohort_figures"):
    run_cohort_figures(inputs=dict(sm.input.items()), outputs=dict(sm.output.items()))
