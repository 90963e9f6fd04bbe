"""Rule whole_session: every per-session stage of one session in one process."""

import os
import sys
from pathlib import Path

# as in session_recovery.py: the recovery stage's threads are worker processes, one core each,
# so BLAS stays single-threaded. Set before numpy is first imported.
for name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[name] = "1"

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.pipeline.stages import StageJob  # noqa: E402
from spikevar.pipeline.whole_session import run_whole_session  # noqa: E402

with rule_job(snakemake, step="whole_session") as sm:  # noqa: F821
    run_whole_session(StageJob.of(sm))
