"""Stage ingest: a session's raw spike and event tables -> spikes.parquet, events.parquet.

Called by the stage's own rule script and by :mod:`spikevar.pipeline.whole_session`.
"""

from __future__ import annotations

from pathlib import Path

from spikevar.inputs.ingest import ingest_session
from spikevar.inputs.settings import ColumnNames, SpikeArrayFiles
from spikevar.pipeline.stages import StageJob


def run(job: StageJob) -> None:
    """Run stage ingest on ``job``'s files with its params (see :class:`StageJob`)."""
    settings = job.params["settings"]
    arrays = settings.get("spike_arrays")
    ingest_session(
        session=job.session,
        # a folder of spike arrays is listed by its two files; ingestion reads the folder
        spikes_path=Path(job.input["spikes"]).parent if arrays and "spike_units" in job.input
        else job.input["spikes"],
        arrays=SpikeArrayFiles(**arrays) if arrays else None,
        events_path=job.input.get("events"),
        columns=ColumnNames.from_config(settings["columns"]),
        time_unit=settings["time_unit"],
        sampling_rate_hz=settings["sampling_rate_hz"],
        spikes_out=job.output["spikes"],
        events_out=job.output["events"],
        span=settings["span"],
    )
