"""Rule session_selection: one session's unit_selection (config inclusion, unit labels)."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.metrics.run_selection import run_session_selection  # noqa: E402
from spikevar.metrics.settings import InclusionSettings  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="selection") as sm:  # noqa: F821
    run_session_selection(
        session=sm.wildcards.session, units_path=sm.input.units, events_path=sm.input.events,
        labels_path=sm.input.get("labels"), output=sm.output[0],
        settings=settings_from(InclusionSettings, sm.params.inclusion, section="inclusion"))
