"""Rule population_fano: regression and mean-matched Fano factor per group x condition x time."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.population.run import run_population_fano  # noqa: E402
from spikevar.population.settings import MeanMatchSettings  # noqa: E402

with rule_job(snakemake, step="population_fano") as sm:  # noqa: F821
    run_population_fano(timecourse_path=sm.input[0], output=sm.output[0],
                        seed=sm.params.seed, factors=tuple(sm.params.factors),
                        settings=settings_from(MeanMatchSettings, sm.params.population,
                                               section="population"))
