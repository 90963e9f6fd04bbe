"""Rule group_summary: hierarchical-bootstrap summaries and differences of unit metrics."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.cohort.run import run_group_summary  # noqa: E402
from spikevar.cohort.settings import BootstrapSettings  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="group_summary") as sm:  # noqa: F821
    run_group_summary(units=sm.input.units, count_fano=sm.input.count_fano,
                      recovery=sm.input.recovery,
                      population_structure=sm.input.population_structure,
                      gain_variance=sm.input.gain_variance, summary_out=sm.output.summary,
                      differences_out=sm.output.differences, seed=sm.params.seed,
                      factors=tuple(sm.params.factors),
                      settings=settings_from(BootstrapSettings, sm.params.bootstrap,
                                             section="bootstrap"))
