"""Rule cohort_figures: the cohort figure set (PNG + SVG)."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.layout import COHORT_FIGURES  # noqa: E402
from spikevar.figures.run import run_cohort_figures  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="cohort_figures") as sm:  # noqa: F821
    run_cohort_figures(inputs=dict(sm.input.items()),
                       outputs={name: sm.output[name] for name in COHORT_FIGURES},
                       workers=sm.threads)
