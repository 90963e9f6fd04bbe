"""Rule session_metrics: one session's units, count_fano and unit_blocks tables."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.pipeline.stages import StageJob, metrics  # noqa: E402

with rule_job(snakemake, step="metrics") as sm:  # noqa: F821
    metrics.run(StageJob.of(sm))
