"""Entry point of the session_shared rule: one session's spikes and events in, its five
shared-variability tables out."""

from __future__ import annotations

import logging
from dataclasses import asdict

import numpy as np

from spikevar.base.conditions import with_factor_columns
from spikevar.base.parquet_io import frame_to_arrow, read_parquet_checked, write_parquet_atomic
from spikevar.base.spike_arrays import recording_span
from spikevar.metrics.session import load_aligned_session
from spikevar.population.shared import TABLES, session_seed, shared_tables

log = logging.getLogger(__name__)


def run_session_shared(*, session: str, spikes_path, events_path, selection_path,
                       outputs: dict[str, str], alignments: list[str], event_time_column: str,
                       epochs: dict[str, tuple[float, float]], windows, settings,
                       seed: int, span: tuple[float, float] | None = None,
                       factors: tuple[str, ...] = ()) -> None:
    """Read a session's spikes, events and unit selection, write its five shared-variability
    tables from the included units."""
    spikes, events, times = load_aligned_session(session, spikes_path, events_path,
                                                 alignments=alignments,
                                                 event_time_column=event_time_column)
    selection = read_parquet_checked(selection_path, session=session,
                                     columns=["unit", "included"]).to_pandas()
    included = set(selection.loc[selection["included"].astype(bool), "unit"].astype(str))
    keep = np.isin(spikes.labels.astype(str), list(included))
    whole = recording_span(spikes, span)
    tables = shared_tables(spikes, events, alignments=times, epochs=epochs, windows=windows,
                           settings=settings, span=tuple(whole),
                           rng=session_seed(seed, session), units=keep)
    meta = {"session": session, "shared": asdict(settings), "timecourse": asdict(windows),
            "epochs": {k: list(v) for k, v in epochs.items()}, "alignments": list(times),
            "seed": seed, "span_s": whole, "span_declared": span is not None}
    for name in TABLES:
        frame = with_factor_columns(tables[name], tuple(factors))
        frame.insert(0, "session", session)
        write_parquet_atomic(frame_to_arrow(frame), outputs[name], metadata=meta)
    structure = tables["population_structure"]
    log.info("session %s: %d of %d units included", session, int(keep.sum()), len(keep))
    log.info("session %s: %d unit pairs, %d condition x epoch factor analyses (n_factors %s)",
             session, len(tables["pair_correlations"]), len(structure),
             ", ".join(map(str, structure["n_factors"].tolist())) or "none")
