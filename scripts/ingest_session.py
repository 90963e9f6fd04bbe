"""Rule ingest_session: raw spike/event tables of one session -> normalised Parquet."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.inputs.ingest import ingest_session  # noqa: E402
from spikevar.inputs.settings import ColumnNames  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="ingest") as sm:  # noqa: F821
    settings = sm.params.settings
    ingest_session(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        events_path=sm.input.get("events"),
        columns=ColumnNames.from_config(settings["columns"]),
        time_unit=settings["time_unit"],
        sampling_rate_hz=settings["sampling_rate_hz"],
        spikes_out=sm.output.spikes,
        events_out=sm.output.events,
        span=settings["span"],
    )
