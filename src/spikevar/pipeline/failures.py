"""After a run with failed jobs: name the failed sessions and build cohort tables from the rest.

Called from the Snakefile's ``onerror`` handler. With ``--keep-going`` the sessions that did not
fail are complete, but Snakemake does not run the cohort jobs (one of their inputs is missing).
This writes ``{results}/cohort_partial/``: the four cohort tables from the complete sessions and
``failed_sessions.parquet``, and logs which session failed in which step and why.
"""

from __future__ import annotations

import logging
import re
from pathlib import Path

from spikevar.cohort.tables import SESSION_TABLES, assemble_cohort_table, write_failed_sessions

log = logging.getLogger(__name__)

STEPS = (("ingest", "spikes.parquet"), ("metrics", "units.parquet"),
         ("recovery", "recovery.parquet"))
ERROR_LINE = re.compile(r"ERROR spikevar: (.*)$")


def failure_reason(log_path: Path) -> str:
    """The user-facing error message from a rule log, or a pointer to the log."""
    if not log_path.exists():
        return "the step did not run (an earlier step failed or the run was interrupted)"
    for line in reversed(log_path.read_text(errors="replace").splitlines()):
        match = ERROR_LINE.search(line)
        if match:
            return match.group(1)
    return f"the job failed; see {log_path}"


def find_failed_sessions(results: Path, sessions: list[str]) -> list[dict]:
    """Sessions with a missing per-session output, with the first failing step and reason."""
    failed = []
    for session in sessions:
        folder = results / "sessions" / session
        for step, output in STEPS:
            if not (folder / output).exists():
                failed.append({"session": session, "rule": step,
                               "reason": failure_reason(results / "logs" / "sessions" / session
                                                        / f"{step}.log")})
                break
    return failed


def write_partial_cohort(results: str | Path, sessions: list[str], metadata: dict) -> list[dict]:
    """Write ``cohort_partial/`` from the complete sessions; return the failed sessions."""
    results = Path(results)
    failed = find_failed_sessions(results, sessions)
    if not failed:
        return failed
    bad = {f["session"] for f in failed}
    complete = [s for s in sessions if s not in bad and all(
        (results / "sessions" / s / f"{t}.parquet").exists() for t in SESSION_TABLES)]
    out = results / "cohort_partial"
    out.mkdir(parents=True, exist_ok=True)
    for table in SESSION_TABLES:
        inputs = {s: str(results / "sessions" / s / f"{table}.parquet") for s in complete}
        assemble_cohort_table(inputs, metadata["rows"], meta_columns=metadata["columns"],
                              output=out / f"{table}.parquet")
    write_failed_sessions(failed, out / "failed_sessions.parquet")
    for f in failed:
        log.error("spikevar: session %s failed in %s: %s", f["session"], f["rule"], f["reason"])
    log.error("spikevar: cohort tables of the %d complete session(s) are in %s; fix the failed "
              "session(s) and rerun to build %s/cohort.", len(complete), out, results)
    return failed
