"""Rule session_recovery: fit poisson, dead_time and exp_recovery to every unit of a session."""

import os
import sys
from pathlib import Path

# the rule's threads are worker processes, one core each: Snakemake sets the BLAS thread
# count to the job's threads, and threaded BLAS on the fits' tiny matrices in every worker
# oversubscribes the cores (measured: 21 s instead of 9 s for 400 units x 1 h). Set before
# numpy is first imported.
for name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[name] = "1"

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.pipeline.jobs import rule_job  # noqa: E402
from spikevar.pipeline.stages import StageJob, recovery  # noqa: E402

with rule_job(snakemake, step="recovery") as sm:  # noqa: F821
    recovery.run(StageJob.of(sm))
