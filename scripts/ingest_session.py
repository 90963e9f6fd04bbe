"""Rule ingest_session: raw spike/event tables of one session -> normalised Parquet."""

import os
import sys
from pathlib import Path

# one job = one core: keep BLAS single-threaded (set before numpy is imported)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.inputs.ingest import ColumnNames, ingest_session  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

sm = snakemake  # noqa: F821
settings = sm.params.settings
with rule_job(sm.log[0], name="ingest"):
    ingest_session(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        events_path=sm.input.get("events"),
        columns=ColumnNames.from_config(settings["columns"]),
        time_unit=settings["time_unit"],
        sampling_rate_hz=settings["sampling_rate_hz"],
        spikes_out=sm.output.spikes,
        events_out=sm.output.events,
    )
