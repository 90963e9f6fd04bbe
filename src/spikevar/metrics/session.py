"""Compute and write one session's metric tables: units and count_fano (rule session_metrics),
and the event-aligned fano_timecourse (rule session_timecourse)."""

from __future__ import annotations

import logging
from dataclasses import asdict
from pathlib import Path

import numpy as np
import pandas as pd

from spikevar.base.conditions import with_factor_columns
from spikevar.base.errors import SpikevarInputError
from spikevar.base.parquet_io import (
    frame_to_arrow,
    read_metadata,
    read_parquet_checked,
    write_parquet_atomic,
)
from spikevar.base.spike_arrays import SpikeArrays, load_spikes, recording_span
from spikevar.metrics.count_fano import count_fano_table
from spikevar.metrics.fano_timecourse import SlidingWindows, fano_timecourse_table
from spikevar.metrics.isi import unit_isi_table
from spikevar.metrics.settings import MetricSettings, StabilitySettings
from spikevar.metrics.stability import block_statistics, stable_flags

log = logging.getLogger(__name__)

#: fano_to_cv2 is reported only when the longest counting window holds this many mean intervals
MIN_INTERVALS_FOR_FF_CV2 = 20

def unit_tables(spikes: SpikeArrays, *, settings: MetricSettings,
                span: tuple[float, float] | None = None,
                stability: StabilitySettings | None = None) -> dict[str, pd.DataFrame]:
    """The whole-recording tables ``units``, ``count_fano`` and ``unit_blocks`` (without the
    session column)."""
    stability = stability or StabilitySettings()
    start, stop = recording_span(spikes, span)
    units = unit_isi_table(spikes, duration_s=stop - start, settings=settings)
    counts = count_fano_table(spikes, windows_s=settings.counting_windows_s, start_s=start,
                              stop_s=stop)
    longest = max(settings.counting_windows_s)
    ff_long = counts.loc[counts["window_s"] == longest].set_index("unit")["fano"]
    units["fano_longest_window_s"] = longest
    # FF(T) -> CV^2 only when the window holds many intervals (Cox 1962): below 20 mean ISIs
    # (common practice) the ratio reflects the window, not the train's (non-)stationarity
    ratio = units["unit"].map(ff_long).to_numpy() / units["isi_cv"] ** 2
    intervals_per_window = longest / units["mean_isi_s"].to_numpy()
    short = ~(intervals_per_window >= MIN_INTERVALS_FOR_FF_CV2)
    units["fano_to_cv2"] = np.where(short, np.nan, ratio)
    units["fano_to_cv2_reason"] = np.where(
        np.isnan(units["mean_isi_s"].to_numpy()), "no ISI statistics",
        np.where(short, f"longest window under {MIN_INTERVALS_FOR_FF_CV2} mean intervals", ""))
    bounds = spikes.bounds()
    has = np.diff(bounds) > 0
    first, last = np.full(spikes.n_units, np.nan), np.full(spikes.n_units, np.nan)
    first[has] = spikes.times[bounds[:-1][has]]
    last[has] = spikes.times[bounds[1:][has] - 1]
    units["first_spike_s"], units["last_spike_s"] = first, last
    blocks, drift = block_statistics(spikes, start_s=start, stop_s=stop, settings=stability)
    drift = drift.set_index("unit").reindex(units["unit"].astype(str))
    units["rate_drift_pvalue"] = drift["rate_drift_pvalue"].to_numpy(float)
    units["rate_drift_reason"] = drift["rate_drift_reason"].fillna("").to_numpy(object)
    units["stable"] = stable_flags(units["rate_drift_pvalue"].to_numpy(),
                                   alpha=stability.alpha)
    return {"units": units, "count_fano": counts, "unit_blocks": blocks}


def timecourse_table(spikes: SpikeArrays, events: pd.DataFrame, *, windows: SlidingWindows,
                     alignments: dict[str, np.ndarray] | None = None,
                     span: tuple[float, float] | None = None) -> pd.DataFrame:
    """The event-aligned ``fano_timecourse`` table, one block per alignment.

    ``alignments`` maps an alignment's name (its event-table column) to each event's time in
    seconds (NaN = no time for that event); default: the event time ``time_s`` as
    ``"event"``. A trial without a time in one alignment is left out of that alignment only
    and counted in ``n_trials_no_time``.
    """
    if alignments is None:
        alignments = {"event": events["time_s"].to_numpy(float) if len(events) else np.zeros(0)}
    start, stop = recording_span(spikes, span)
    blocks = []
    for name, times in alignments.items():
        times = np.asarray(times, dtype=float)
        has_time = np.isfinite(times)
        aligned = pd.DataFrame({"time_s": times[has_time],
                                "condition": events["condition"].to_numpy()[has_time]})
        block = fano_timecourse_table(spikes, aligned, windows=windows,
                                      recording_s=(start, stop))
        missing = pd.Series(events["condition"].to_numpy()[~has_time]).value_counts()
        block.insert(1, "alignment", name)
        block["n_trials_no_time"] = block["condition"].map(missing).fillna(0).astype(np.int64)
        blocks.append(block)
    return pd.concat(blocks, ignore_index=True)


def compute_tables(spikes: SpikeArrays, events: pd.DataFrame, *, settings: MetricSettings,
                   windows: SlidingWindows, span: tuple[float, float] | None = None
                   ) -> dict[str, pd.DataFrame]:
    """Every per-session metric table (without the session column); the rules write them in
    two jobs (``session_metrics``, ``session_timecourse``) so that event settings rerun only
    the event-aligned tables."""
    tables = unit_tables(spikes, settings=settings, span=span)
    tables["fano_timecourse"] = timecourse_table(spikes, events, windows=windows, span=span)
    return tables


def alignment_times(events: pd.DataFrame, names: list[str], *, event_time_column: str,
                    seconds_per_unit: float, session: str, path) -> dict[str, np.ndarray]:
    """Each alignment's event times in seconds, from the normalised events table.

    The event time column itself is ``time_s``; another alignment column is read as numbers in
    the event table's time unit (``seconds_per_unit`` from the ingestion record); empty cells
    are events without that time.
    """
    out = {}
    for name in names or [event_time_column]:
        if name == event_time_column or len(events) == 0:
            out[name] = events["time_s"].to_numpy(float)
            continue
        if name not in events.columns:
            raise SpikevarInputError(
                f"The event table has no column {name!r} to align on.",
                fix=f"add the column, or remove {name!r} from the config's alignments "
                    f"(columns present: {', '.join(map(str, events.columns))}).",
                session=session, path=str(path), where=f"column {name!r}")
        raw = events[name]
        values = pd.to_numeric(raw, errors="coerce")
        bad = values.isna() & raw.notna() & (raw.astype(str).str.strip() != "")
        if bad.any():
            rows = ", ".join(str(i + 1) for i in np.flatnonzero(bad.to_numpy())[:5])
            raise SpikevarInputError(
                f"Alignment column {name!r} holds values that are not times (rows {rows} of "
                "the time-sorted event table).",
                fix="store alignment times as numbers in the event table's time unit; leave a "
                    "cell empty when an event has no such time.",
                session=session, path=str(path), where=f"column {name!r}")
        out[name] = values.to_numpy(float) * seconds_per_unit
    return out


def run_session_metrics(*, session: str, spikes_path, outputs: dict[str, str],
                        settings: MetricSettings, stability: StabilitySettings,
                        span: tuple[float, float] | None = None) -> None:
    """Read a session's spikes, compute ``units``, ``count_fano`` and ``unit_blocks``, write
    them atomically."""
    spikes = load_spikes(spikes_path, session=session)
    tables = unit_tables(spikes, settings=settings, span=span, stability=stability)
    meta = {"session": session, "settings": asdict(settings), "stability": asdict(stability),
            "span_s": recording_span(spikes, span), "span_declared": span is not None}
    for name, frame in tables.items():
        frame.insert(0, "session", session)
        write_parquet_atomic(frame_to_arrow(frame), Path(outputs[name]), metadata=meta)
    few = int((tables["units"]["isi_reason"] != "").sum())
    drifting = int((~tables["units"]["stable"]).sum())
    log.info("session %s: %d units (%d without ISI metrics, %d not stable over the session), "
             "%d count rows, %d unit blocks", session, len(tables["units"]), few, drifting,
             len(tables["count_fano"]), len(tables["unit_blocks"]))


def load_aligned_session(session: str, spikes_path, events_path, *, alignments: list[str],
                         event_time_column: str
                         ) -> tuple[SpikeArrays, pd.DataFrame, dict[str, np.ndarray]]:
    """A session's spikes, its events and each alignment's event times in seconds (the input
    of every event-aligned rule)."""
    spikes = load_spikes(spikes_path, session=session)
    events = read_parquet_checked(events_path, session=session).to_pandas()
    record = read_metadata(events_path)
    times = alignment_times(events, list(alignments), event_time_column=event_time_column,
                            seconds_per_unit=float(record.get("seconds_per_unit", 1.0)),
                            session=session, path=record.get("source_path") or events_path)
    return spikes, events, times


def run_session_timecourse(*, session: str, spikes_path, events_path, output: str,
                           windows: SlidingWindows, alignments: list[str],
                           event_time_column: str, span: tuple[float, float] | None = None,
                           factors: tuple[str, ...] = ()) -> None:
    """Read a session's spikes and events, write the event-aligned ``fano_timecourse``."""
    spikes, events, times = load_aligned_session(session, spikes_path, events_path,
                                                 alignments=alignments,
                                                 event_time_column=event_time_column)
    frame = timecourse_table(spikes, events, windows=windows, alignments=times, span=span)
    frame = with_factor_columns(frame, tuple(factors))
    frame.insert(0, "session", session)
    write_parquet_atomic(frame_to_arrow(frame), Path(output), metadata={
        "session": session, "timecourse": asdict(windows), "alignments": list(times),
        "span_s": recording_span(spikes, span), "span_declared": span is not None})
    if len(events) == 0:
        log.info("session %s: no events; fano_timecourse is empty.", session)
    dropped = frame.groupby(["alignment", "condition"])["n_trials_dropped"].first() \
        if len(frame) else pd.Series(dtype=np.int64)
    for (name, cond), n in dropped.items():
        if n:
            log.warning("session %s: %d trial(s) of condition %s dropped for alignment %s: "
                        "their windows leave the recording.", session, n, cond, name)
    log.info("session %s: %d timecourse rows over %d alignment(s)", session, len(frame),
             len(times))
