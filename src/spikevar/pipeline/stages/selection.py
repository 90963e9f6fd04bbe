"""Stage selection: which units count (unit_selection).

Called by the stage's own rule script and by :mod:`spikevar.pipeline.whole_session`.
"""

from __future__ import annotations

from spikevar.base.settings import settings_from
from spikevar.metrics.run_selection import run_session_selection
from spikevar.metrics.settings import InclusionSettings
from spikevar.pipeline.stages import StageJob


def run(job: StageJob) -> None:
    """Run stage selection on ``job``'s files with its params (see :class:`StageJob`)."""
    run_session_selection(
        session=job.session, units_path=job.input["units"], events_path=job.input["events"],
        labels_path=job.input.get("labels"), output=job.output["unit_selection"],
        settings=settings_from(InclusionSettings, job.params["inclusion"], section="inclusion"))
