"""Rule session_metrics: one session's units, count_fano and unit_blocks tables."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.metrics.session import run_session_metrics  # noqa: E402
from spikevar.metrics.settings import MetricSettings, StabilitySettings  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="metrics") as sm:  # noqa: F821
    run_session_metrics(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        outputs={name: sm.output[name] for name in ("units", "count_fano", "unit_blocks")},
        settings=settings_from(MetricSettings, sm.params.metrics, section="metrics"),
        stability=settings_from(StabilitySettings, sm.params.stability, section="stability"),
        span=sm.params.span,
    )
