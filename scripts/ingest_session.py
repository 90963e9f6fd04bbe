"""Rule ingest_session: raw spike/event tables of one session -> normalised Parquet."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.inputs.ingest import ingest_session  # noqa: E402
from spikevar.inputs.settings import ColumnNames, SpikeArrayFiles  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="ingest") as sm:  # noqa: F821
    settings = sm.params.settings
    arrays = settings.get("spike_arrays")
    ingest_session(
        session=sm.wildcards.session,
        # a folder of spike arrays is listed by its two files; ingestion reads the folder
        spikes_path=Path(sm.input.spikes).parent if arrays and "spike_units" in sm.input.keys()
        else sm.input.spikes,
        arrays=SpikeArrayFiles(**arrays) if arrays else None,
        events_path=sm.input.get("events"),
        columns=ColumnNames.from_config(settings["columns"]),
        time_unit=settings["time_unit"],
        sampling_rate_hz=settings["sampling_rate_hz"],
        spikes_out=sm.output.spikes,
        events_out=sm.output.events,
        span=settings["span"],
    )
