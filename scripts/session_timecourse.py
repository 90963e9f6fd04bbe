"""Rule session_timecourse: one session's event-aligned fano_timecourse, per alignment."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.metrics.session import run_session_timecourse  # noqa: E402
from spikevar.metrics.settings import SlidingWindows  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="timecourse") as sm:  # noqa: F821
    run_session_timecourse(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        events_path=sm.input.events,
        output=sm.output[0],
        windows=settings_from(SlidingWindows, sm.params.timecourse, section="timecourse"),
        alignments=list(sm.params.alignments),
        event_time_column=sm.params.event_time_column,
        span=sm.params.span,
        factors=tuple(sm.params.factors),
    )
