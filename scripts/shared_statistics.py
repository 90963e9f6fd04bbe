"""Rule shared_statistics: shared variability over time and r_sc against rate, by group."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.cohort.run import run_shared_statistics  # noqa: E402
from spikevar.cohort.settings import BootstrapSettings  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="shared_statistics") as sm:  # noqa: F821
    run_shared_statistics(timecourse=sm.input.shared_timecourse, pairs=sm.input.pair_correlations,
                          over_time_out=sm.output.over_time, by_rate_out=sm.output.by_rate,
                          seed=sm.params.seed, factors=tuple(sm.params.factors),
                          settings=settings_from(BootstrapSettings, sm.params.bootstrap,
                                                 section="bootstrap"))
