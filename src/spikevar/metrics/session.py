"""Compute and write one session's metric tables: units, count_fano and fano_timecourse."""

from __future__ import annotations

import logging
from dataclasses import asdict
from pathlib import Path

import numpy as np
import pandas as pd

from spikevar.base.parquet_io import frame_to_arrow, read_parquet_checked, write_parquet_atomic
from spikevar.base.spike_arrays import SpikeArrays, load_spikes, recording_span
from spikevar.metrics.count_fano import count_fano_table
from spikevar.metrics.fano_timecourse import SlidingWindows, fano_timecourse_table
from spikevar.metrics.isi import unit_isi_table
from spikevar.metrics.settings import MetricSettings

log = logging.getLogger(__name__)

#: fano_to_cv2 is reported only when the longest counting window holds this many mean intervals
MIN_INTERVALS_FOR_FF_CV2 = 20

def compute_tables(spikes: SpikeArrays, events: pd.DataFrame, *, settings: MetricSettings,
                   windows: SlidingWindows, span: tuple[float, float] | None = None
                   ) -> dict[str, pd.DataFrame]:
    """The three per-session tables (without the session column)."""
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
    timecourse = fano_timecourse_table(spikes, events, windows=windows,
                                       recording_s=(start, stop))
    return {"units": units, "count_fano": counts, "fano_timecourse": timecourse}


def run_session_metrics(*, session: str, spikes_path, events_path, outputs: dict[str, str],
                        settings: MetricSettings, windows: SlidingWindows,
                        span: tuple[float, float] | None = None) -> None:
    """Read a session's normalised tables, compute the metrics, write each table atomically."""
    spikes = load_spikes(spikes_path, session=session)
    events = read_parquet_checked(events_path, session=session).to_pandas()
    tables = compute_tables(spikes, events, settings=settings, windows=windows, span=span)
    meta = {"session": session, "settings": asdict(settings), "timecourse": asdict(windows),
            "span_s": recording_span(spikes, span), "span_declared": span is not None}
    for name, frame in tables.items():
        frame.insert(0, "session", session)
        write_parquet_atomic(frame_to_arrow(frame), Path(outputs[name]), metadata=meta)
    few = int((tables["units"]["isi_reason"] != "").sum())
    log.info("session %s: %d units (%d without ISI metrics), %d count rows, %d timecourse rows",
             session, len(tables["units"]), few, len(tables["count_fano"]),
             len(tables["fano_timecourse"]))
    if len(events) == 0:
        log.info("session %s: no events; fano_timecourse is empty.", session)
    dropped = tables["fano_timecourse"].groupby("condition")["n_trials_dropped"].first() \
        if len(tables["fano_timecourse"]) else pd.Series(dtype=np.int64)
    for cond, n in dropped.items():
        if n:
            log.warning("session %s: %d trial(s) of condition %s dropped: their windows leave "
                        "the recording.", session, n, cond)
