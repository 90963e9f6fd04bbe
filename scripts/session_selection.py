"""Rule session_selection: one session's unit_selection (config inclusion, unit labels)."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.pipeline.stages import StageJob, selection  # noqa: E402

with rule_job(snakemake, step="selection") as sm:  # noqa: F821
    selection.run(StageJob.of(sm))
