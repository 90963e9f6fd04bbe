"""Stage metrics: per-unit variability tables (units, count_fano, unit_blocks).

Called by the stage's own rule script and by :mod:`spikevar.pipeline.whole_session`.
"""

from __future__ import annotations

from spikevar.base.settings import settings_from
from spikevar.metrics.session import run_session_metrics
from spikevar.metrics.settings import MetricSettings, StabilitySettings
from spikevar.pipeline.stages import StageJob


def run(job: StageJob) -> None:
    """Run stage metrics on ``job``'s files with its params (see :class:`StageJob`)."""
    run_session_metrics(
        session=job.session,
        spikes_path=job.input["spikes"],
        outputs={name: job.output[name] for name in ("units", "count_fano", "unit_blocks")},
        settings=settings_from(MetricSettings, job.params["metrics"], section="metrics"),
        stability=settings_from(StabilitySettings, job.params["stability"],
                                section="stability"),
        span=job.params["span"],
    )
