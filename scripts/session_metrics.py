"""Rule session_metrics: one session's units, count_fano and fano_timecourse tables."""

import os
import sys
from pathlib import Path

# one job = one core: keep BLAS single-threaded (set before numpy is imported)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.metrics.session import MetricSettings, run_session_metrics  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

sm = snakemake  # noqa: F821
with rule_job(sm.log[0], name="metrics"):
    run_session_metrics(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        events_path=sm.input.events,
        outputs={name: sm.output[name] for name in ("units", "count_fano", "fano_timecourse")},
        settings=MetricSettings.from_config(sm.params.metrics, sm.params.timecourse),
        duration_s=sm.params.duration_s,
    )
