"""Rule population_fano: regression and mean-matched Fano factor per group x condition x time."""

import os
import sys
from pathlib import Path

# one job = one core: keep BLAS single-threaded (set before numpy is imported)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.population.run import run_population_fano  # noqa: E402

sm = snakemake  # noqa: F821
with rule_job(sm.log[0], name="population_fano"):
    run_population_fano(timecourse_path=sm.input[0], output=sm.output[0],
                        settings=dict(sm.params.settings), seed=sm.params.seed)
