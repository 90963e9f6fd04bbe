"""Rule session_recovery: fit poisson, dead_time and exp_recovery to every unit of a session."""

import os
import sys
from pathlib import Path

# one job = one core: keep BLAS single-threaded (set before numpy is imported)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.recovery.table import RecoverySettings, run_session_recovery  # noqa: E402

sm = snakemake  # noqa: F821
with rule_job(sm.log[0], name="recovery"):
    run_session_recovery(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        output=sm.output[0],
        settings=RecoverySettings(**sm.params.recovery),
        duration_s=sm.params.duration_s,
    )
