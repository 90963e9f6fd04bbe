"""After a run with failed jobs: name what failed, and build cohort tables from the rest.

Called from the Snakefile's ``onerror`` handler. With ``--keep-going`` the sessions that did not
fail are complete, but Snakemake does not run the cohort jobs (one of their inputs is missing).
This writes ``{results}/cohort_partial/``: the cohort tables from the complete sessions and
``failed_sessions.parquet``. Reasons come from the failure records that the job wrapper
(:mod:`spikevar.pipeline.jobs`) writes beside each failed job's log; no log text is parsed.
"""

from __future__ import annotations

import logging
from pathlib import Path

from spikevar.base.layout import (
    COHORT_DATASETS,
    FAILURE_SUFFIX,
    SESSION_STEPS,
    SESSION_TABLES,
    ResultsLayout,
    failure_record_path,
)
from spikevar.cohort.tables import run_cohort_table, write_failed_sessions
from spikevar.pipeline.jobs import read_failure_record

log = logging.getLogger(__name__)

NOT_RUN = "the step did not run (an earlier step failed or the run was interrupted)"


def session_failure(layout: ResultsLayout, session: str) -> dict | None:
    """The first failed step of a session (from its failure record), or None when complete."""
    # one job ran every stage (config session_jobs: whole_session): its record has the reason
    record = read_failure_record(failure_record_path(layout.session_log(session,
                                                                        "whole_session")))
    if record is not None:
        return {"session": session, "rule": "whole_session", "reason": record["reason"]}
    for rule, step, first_output in SESSION_STEPS:
        record = read_failure_record(failure_record_path(layout.session_log(session, step)))
        if record is not None:
            return {"session": session, "rule": rule, "reason": record["reason"]}
        output = (layout.session_table(session, first_output) if first_output
                  else layout.recovery_figure(session))
        if not Path(output).exists():
            return {"session": session, "rule": rule, "reason": NOT_RUN}
    return None


def cohort_failures(layout: ResultsLayout) -> list[dict]:
    """Failure records of cohort jobs (cohort tables, statistics, figures, hand-off)."""
    folder = Path(layout.cohort_log_folder())
    records = [read_failure_record(p) for p in sorted(folder.glob(f"*{FAILURE_SUFFIX}"))]
    return [{"session": "", "rule": r["rule"], "reason": r["reason"]} for r in records if r]


def find_failed_sessions(layout: ResultsLayout, sessions: list[str]) -> list[dict]:
    """Sessions with a failed or missing step, each with the first failing step and reason."""
    return [f for f in (session_failure(layout, s) for s in sessions) if f is not None]


def write_partial_cohort(layout: ResultsLayout | str | Path, sessions: list[str],
                         metadata: dict) -> list[dict]:
    """Write ``cohort_partial/`` from the complete sessions; return every failure found.

    The list holds one row per failed session and one per failed cohort job (``session`` empty).
    """
    if not isinstance(layout, ResultsLayout):
        layout = ResultsLayout(str(layout))
    failed = find_failed_sessions(layout, sessions)
    cohort = cohort_failures(layout)
    for f in cohort:
        log.error("spikevar: cohort step %s failed: %s", f["rule"], f["reason"])
    if not failed:
        return cohort
    bad = {f["session"] for f in failed}
    complete = [s for s in sessions if s not in bad and all(
        Path(layout.session_table(s, t)).exists() for t in SESSION_TABLES)]
    out = Path(layout.partial_cohort())
    out.mkdir(parents=True, exist_ok=True)
    for table in SESSION_TABLES:
        inputs = {s: layout.session_table(s, table) for s in complete}
        run_cohort_table(table, inputs, metadata, output=out / table if table in COHORT_DATASETS
                         else out / f"{table}.parquet")
    write_failed_sessions(failed, out / "failed_sessions.parquet")
    for f in failed:
        log.error("spikevar: session %s failed in %s: %s", f["session"], f["rule"], f["reason"])
    log.error("spikevar: cohort tables of the %d complete session(s) are in %s; fix the failed "
              "session(s) and rerun to build %s/cohort.", len(complete), out, layout.root)
    return [*failed, *cohort]


def failure_line(failure: dict) -> str:
    """One line for the terminal: which session (or cohort step) failed, where, and why."""
    if failure["session"]:
        return (f"spikevar: session {failure['session']} failed in {failure['rule']}: "
                f"{failure['reason']}")
    return f"spikevar: cohort step {failure['rule']} failed: {failure['reason']}"
