"""Rule session_recovery_figure: ISI densities with fitted models, and KS plots, per unit."""

import os
import sys
from pathlib import Path

# one job = one core: keep BLAS single-threaded (set before numpy is imported)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.figures.recovery import draw_session_recovery  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

sm = snakemake  # noqa: F821
with rule_job(sm.log[0], name="recovery_figure"):
    draw_session_recovery(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        recovery_path=sm.input.recovery,
        output=sm.output[0],
        max_units=sm.params.max_units,
        duration_s=sm.params.duration_s,
    )
