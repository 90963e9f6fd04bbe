"""Rule ingest_session: raw spike/event tables of one session -> normalised Parquet."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.pipeline.stages import StageJob, ingest  # noqa: E402

with rule_job(snakemake, step="ingest") as sm:  # noqa: F821
    ingest.run(StageJob.of(sm))
