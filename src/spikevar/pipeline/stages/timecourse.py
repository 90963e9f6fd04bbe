"""Stage timecourse: the event-aligned Fano factor time course (fano_timecourse).

Called by the stage's own rule script and by :mod:`spikevar.pipeline.whole_session`.
"""

from __future__ import annotations

from spikevar.base.settings import settings_from
from spikevar.metrics.session import run_session_timecourse
from spikevar.metrics.settings import SlidingWindows
from spikevar.pipeline.stages import StageJob


def run(job: StageJob) -> None:
    """Run stage timecourse on ``job``'s files with its params (see :class:`StageJob`)."""
    run_session_timecourse(
        session=job.session,
        spikes_path=job.input["spikes"],
        events_path=job.input["events"],
        output=job.output["fano_timecourse"],
        windows=settings_from(SlidingWindows, job.params["timecourse"], section="timecourse"),
        alignments=list(job.params["alignments"]),
        event_time_column=job.params["event_time_column"],
        span=job.params["span"],
        factors=tuple(job.params["factors"]),
    )
