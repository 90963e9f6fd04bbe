"""The per-session stages as calls on one job's files and settings.

Each stage module has one function, ``run(job)``: it takes a :class:`StageJob` (the session,
its input and output files by name, the rule's params by name, its threads) and calls the
stage's package entry point with typed settings. A per-stage rule's script calls one stage
(config ``session_jobs: by_stage``); :mod:`spikevar.pipeline.whole_session` calls them all in
one process (``session_jobs: whole_session``). Output names are table names (``spikes``,
``units``, ``recovery``, ...), unique across stages, and every stage reads only the params it
needs, so one job can hand the same ``output`` and ``params`` to every stage.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass


@dataclass(frozen=True)
class StageJob:
    """One job's session, files and params, by name (a plain copy of Snakemake's job object)."""

    session: str
    input: Mapping[str, str]
    output: Mapping[str, str]
    params: Mapping[str, object]
    threads: int = 1

    @classmethod
    def of(cls, sm) -> StageJob:
        """From the ``snakemake`` object of a rule script (named inputs, outputs, params)."""
        return cls(session=sm.wildcards.session, input=dict(sm.input.items()),
                   output=dict(sm.output.items()), params=dict(sm.params.items()),
                   threads=int(sm.threads))
