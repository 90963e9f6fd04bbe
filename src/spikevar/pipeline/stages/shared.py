"""Stage shared: shared variability of the simultaneously recorded units.

Called by the stage's own rule script and by :mod:`spikevar.pipeline.whole_session`.
"""

from __future__ import annotations

from spikevar.base.layout import SHARED_TABLES
from spikevar.base.settings import settings_from
from spikevar.metrics.settings import SlidingWindows
from spikevar.pipeline.stages import StageJob
from spikevar.population.run_shared import run_session_shared
from spikevar.population.settings import SharedSettings, epochs_from


def run(job: StageJob) -> None:
    """Run stage shared on ``job``'s files with its params (see :class:`StageJob`)."""
    run_session_shared(
        session=job.session,
        spikes_path=job.input["spikes"],
        events_path=job.input["events"],
        selection_path=job.input["selection"],
        outputs={name: job.output[name] for name in SHARED_TABLES},
        alignments=list(job.params["alignments"]),
        event_time_column=job.params["event_time_column"],
        epochs=epochs_from(job.params["epochs"]),
        windows=settings_from(SlidingWindows, job.params["timecourse"], section="timecourse"),
        settings=settings_from(SharedSettings, job.params["shared"], section="shared"),
        seed=int(job.params["seed"]),
        span=job.params["span"],
        factors=tuple(job.params["factors"]),
    )
