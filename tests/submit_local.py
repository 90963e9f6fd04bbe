"""A stand-in cluster submit command for the generic cluster executor test.

Usage: submit_local.py RECORD_DIR MEM_MB RUNTIME RULE JOBSCRIPT
Records the declared resources, starts the job script as a separate, detached process (as a
batch system would) and prints a job id.
"""

import json
import subprocess
import sys
import uuid
from pathlib import Path

record_dir, mem_mb, runtime, rule, jobscript = sys.argv[1:6]
job_id = uuid.uuid4().hex[:12]
Path(record_dir).mkdir(parents=True, exist_ok=True)
(Path(record_dir) / f"{job_id}.json").write_text(json.dumps(
    {"rule": rule, "mem_mb": mem_mb, "runtime": runtime, "jobscript": jobscript}))
with open(Path(record_dir) / f"{job_id}.out", "w") as out:
    subprocess.Popen(["bash", jobscript], stdout=out, stderr=subprocess.STDOUT,
                     start_new_session=True)
print(job_id)
