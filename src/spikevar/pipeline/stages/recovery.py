"""Stage recovery: the refractory recovery fits of every unit (recovery).

Called by the stage's own rule script and by :mod:`spikevar.pipeline.whole_session`.
"""

from __future__ import annotations

from spikevar.base.settings import settings_from
from spikevar.pipeline.stages import StageJob
from spikevar.recovery.settings import RecoverySettings
from spikevar.recovery.table import run_session_recovery


def run(job: StageJob) -> None:
    """Run stage recovery on ``job``'s files with its params (see :class:`StageJob`)."""
    run_session_recovery(
        session=job.session,
        spikes_path=job.input["spikes"],
        output=job.output["recovery"],
        settings=settings_from(RecoverySettings, job.params["recovery"], section="recovery"),
        span=job.params["span"],
        workers=job.threads,
    )
