"""Rule session_timecourse: one session's event-aligned fano_timecourse, per alignment."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.pipeline.stages import StageJob, timecourse  # noqa: E402

with rule_job(snakemake, step="timecourse") as sm:  # noqa: F821
    timecourse.run(StageJob.of(sm))
