"""Helpers for the thin rule scripts: logging to the rule's log file and clean error reports."""

from __future__ import annotations

import logging
import sys
from collections.abc import Iterator
from contextlib import contextmanager

from spikevar.base.errors import SpikevarInputError


@contextmanager
def rule_job(log_path: str, *, name: str) -> Iterator[logging.Logger]:
    """Log to ``log_path`` and stderr; turn a :class:`SpikevarInputError` into a clean exit.

    The user sees one line that names the session, file and fix, both in the terminal and in the
    log, instead of a traceback. Any other exception is a bug and keeps its traceback.
    """
    root = logging.getLogger()
    root.setLevel(logging.INFO)
    for handler in list(root.handlers):
        root.removeHandler(handler)
    fmt = logging.Formatter("%(asctime)s %(levelname)s %(message)s")
    for handler in (logging.FileHandler(log_path, mode="w"), logging.StreamHandler(sys.stderr)):
        handler.setFormatter(fmt)
        root.addHandler(handler)
    logger = logging.getLogger(f"spikevar.{name}")
    try:
        yield logger
    except SpikevarInputError as err:
        logger.error("spikevar: %s", err)
        logging.shutdown()
        sys.exit(1)
