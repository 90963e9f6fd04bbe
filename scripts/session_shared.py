"""Rule session_shared: one session's shared-variability tables, per alignment x condition."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.layout import SHARED_TABLES  # noqa: E402
from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.metrics.settings import SlidingWindows  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.population.run_shared import run_session_shared  # noqa: E402
from spikevar.population.settings import SharedSettings, epochs_from  # noqa: E402

with rule_job(snakemake, step="shared") as sm:  # noqa: F821
    run_session_shared(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        events_path=sm.input.events,
        selection_path=sm.input.selection,
        outputs={name: sm.output[name] for name in SHARED_TABLES},
        alignments=list(sm.params.alignments),
        event_time_column=sm.params.event_time_column,
        epochs=epochs_from(sm.params.epochs),
        windows=settings_from(SlidingWindows, sm.params.timecourse, section="timecourse"),
        settings=settings_from(SharedSettings, sm.params.shared, section="shared"),
        seed=int(sm.params.seed),
        span=sm.params.span,
        factors=tuple(sm.params.factors),
    )
