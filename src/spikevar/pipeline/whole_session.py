"""Every per-session stage of one session in one process (config ``session_jobs:
whole_session``).

For cohorts of many small sessions: there the fixed start-up of a job (interpreter, numpy,
pandas, pyarrow, Snakemake's script set-up; about 1 s) costs more than most stages' work, and
one job per session instead of six takes that cost once. The price: any per-session setting or
stage code change reruns the whole session, not only the stages that read it. The tables are the
same as those of the per-stage jobs (``tests/test_workflow_whole_session.py``).
"""

from __future__ import annotations

import logging
from collections.abc import Callable

from spikevar.pipeline.stages import (
    StageJob,
    ingest,
    metrics,
    recovery,
    selection,
    shared,
    timecourse,
)

log = logging.getLogger(__name__)

#: In the order one process runs them, with each stage's inputs (its input name -> the table
#: of an earlier stage that feeds it).
ORDER: tuple[tuple[str, Callable[[StageJob], None], dict[str, str]], ...] = (
    ("ingest", ingest.run, {}),
    ("metrics", metrics.run, {"spikes": "spikes"}),
    ("timecourse", timecourse.run, {"spikes": "spikes", "events": "events"}),
    ("recovery", recovery.run, {"spikes": "spikes"}),
    ("selection", selection.run, {"units": "units", "events": "events"}),
    ("shared", shared.run, {"spikes": "spikes", "events": "events",
                            "selection": "unit_selection"}),
)


def run_whole_session(job: StageJob) -> None:
    """Run every stage of ``job.session`` in pipeline order.

    ``job.input``: the raw files (as for ingestion) and, when the sheet names a label table,
    ``labels`` (the normalised unit labels); ``job.output``: every per-session table by name;
    ``job.params``: the union of the stage rules' params. Each stage writes its tables
    atomically; Snakemake removes a failed job's outputs.
    """
    raw = {k: v for k, v in job.input.items() if k != "labels"}
    for name, stage, feeds in ORDER:
        files = raw if name == "ingest" else {k: job.output[t] for k, t in feeds.items()}
        if name == "selection" and "labels" in job.input:
            files["labels"] = job.input["labels"]
        log.info("session %s: stage %s", job.session, name)
        stage(StageJob(session=job.session, input=files, output=job.output,
                       params=job.params, threads=job.threads))
