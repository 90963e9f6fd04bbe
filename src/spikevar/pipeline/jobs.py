"""The one wrapper every rule script runs its work in: logging, failure records, clean exits.

A rule script is three statements: put ``src`` on the path, import its entry function, and call
it inside ``with rule_job(snakemake, step=...) as sm:``. The wrapper

- logs to the rule's log file (``log.log``) and to stderr;
- on failure writes a failure record, JSON, beside the log (``log.failure``): session (when the
  rule has one), rule, step, kind and reason; the failure report reads these records, never the
  log text;
- turns a :class:`SpikevarInputError` (bad input, named and with its fix) and a full disk into
  one clean line and exit status 1; any other exception is a bug: it is recorded as such and
  keeps its traceback.
"""

from __future__ import annotations

import json
import logging
import os
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from datetime import UTC, datetime
from pathlib import Path

from spikevar.base.errors import SpikevarInputError, disk_full_message, is_disk_full
from spikevar.base.layout import failure_record_path

log = logging.getLogger(__name__)


def _log_paths(sm) -> tuple[str, str]:
    logs = sm.log
    main = logs.get("log") if hasattr(logs, "get") and logs.get("log") else logs[0]
    failure = logs.get("failure") if hasattr(logs, "get") else None
    return str(main), str(failure or failure_record_path(main))


def _setup_logging(log_path: str) -> None:
    root = logging.getLogger()
    root.setLevel(logging.INFO)
    for handler in list(root.handlers):
        root.removeHandler(handler)
    fmt = logging.Formatter("%(asctime)s %(levelname)s %(message)s")
    Path(log_path).parent.mkdir(parents=True, exist_ok=True)
    for handler in (logging.FileHandler(log_path, mode="w"), logging.StreamHandler(sys.stderr)):
        handler.setFormatter(fmt)
        root.addHandler(handler)
    if os.environ.get("SLURM_JOB_ID"):  # which batch job ran this step (cluster runs)
        root.info("SLURM job %s on %s", os.environ["SLURM_JOB_ID"],
                  os.environ.get("SLURMD_NODENAME", "?"))


def write_failure_record(path: str, record: dict) -> None:
    """Write the failure record atomically; on a full disk give up (the log and exit say it)."""
    tmp = f"{path}.tmp"
    try:
        with open(tmp, "w") as handle:
            json.dump(record, handle, indent=2)
        os.replace(tmp, path)
    except OSError:  # the disk may be full: the log line and the exit status still say it
        Path(tmp).unlink(missing_ok=True)


def read_failure_record(path: str | Path) -> dict | None:
    """A failure record, or None when there is none (or it is unreadable)."""
    try:
        return json.loads(Path(path).read_text())
    except (OSError, ValueError):
        return None


@contextmanager
def rule_job(sm, *, step: str) -> Iterator[object]:
    """Run a rule's work with logging and failure records (see the module docstring)."""
    log_path, failure_path = _log_paths(sm)
    _setup_logging(log_path)
    Path(failure_path).unlink(missing_ok=True)  # a record from an earlier failed run
    wildcards = getattr(sm, "wildcards", {})
    session = wildcards.get("session") if hasattr(wildcards, "get") else None
    rule = getattr(sm, "rule", step)

    def fail(kind: str, reason: str) -> None:
        write_failure_record(failure_path, {
            "session": session, "rule": rule, "step": step, "kind": kind, "reason": reason,
            "log": log_path, "time": datetime.now(UTC).isoformat(timespec="seconds")})

    try:
        yield sm
    except SpikevarInputError as err:
        log.error("spikevar: %s", err)
        fail("input", str(err))
        logging.shutdown()
        sys.exit(1)
    except OSError as err:
        if not is_disk_full(err):
            log.exception("spikevar: internal error in %s", rule)
            fail("internal", f"internal error ({type(err).__name__}: {err}); see {log_path}")
            raise
        where = getattr(err, "output_path", None) or err.filename or "an output"
        log.error("spikevar: %s", disk_full_message(where))
        fail("disk_full", disk_full_message(where))
        logging.shutdown()
        sys.exit(1)
    except Exception as err:
        log.exception("spikevar: internal error in %s", rule)
        fail("internal", f"internal error ({type(err).__name__}: {err}); this is a bug in "
                         f"spikevar, please report it with {log_path}")
        raise
