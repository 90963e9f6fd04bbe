"""Rule population_fano: regression and mean-matched Fano factor per group x condition x time."""

import os
import sys
from pathlib import Path

# the rule's threads are worker processes sharing the resamples, one core each (Snakemake sets
# the BLAS thread count to the job's threads); set before numpy is first imported
for name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[name] = "1"

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.population.run import run_population_fano  # noqa: E402
from spikevar.population.settings import MeanMatchSettings  # noqa: E402

with rule_job(snakemake, step="population_fano") as sm:  # noqa: F821
    run_population_fano(timecourse_path=sm.input[0], output=sm.output[0],
                        seed=sm.params.seed, factors=tuple(sm.params.factors),
                        settings=settings_from(MeanMatchSettings, sm.params.population,
                                               section="population"),
                        workers=sm.threads)
