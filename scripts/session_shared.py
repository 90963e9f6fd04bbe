"""Rule session_shared: one session's shared-variability tables, per alignment x condition."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.pipeline.stages import StageJob, shared  # noqa: E402

with rule_job(snakemake, step="shared") as sm:  # noqa: F821
    shared.run(StageJob.of(sm))
