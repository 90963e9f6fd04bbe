"""Event-aligned counts: window conventions, dropped trials, edge cases, gain-variability truth."""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from reference_metrics import trial_counts_loop

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.fano_timecourse import fano_timecourse_table, trial_counts
from spikevar.metrics.settings import SlidingWindows
from spikevar.synth import simulate


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(0, 300), max_size=60), st.lists(st.integers(20, 280), min_size=1,
                                                             max_size=8))
def test_trial_counts_match_loop(spike_ms, event_ms):
    times = np.sort(np.array(spike_ms, dtype=float)) / 100
    events = np.array(event_ms, dtype=float) / 100
    windows = SlidingWindows(start_s=-0.2, stop_s=0.3, width_s=0.1, step_s=0.05)
    left = windows.left_edges()
    np.testing.assert_array_equal(trial_counts(times, events, left, windows.width_s),
                                  trial_counts_loop(times, events, left, windows.width_s))


def test_window_layout():
    w = SlidingWindows(start_s=-0.5, stop_s=1.0, width_s=0.1, step_s=0.025)
    left = w.left_edges()
    assert left[0] == -0.5 and left[-1] + 0.1 == pytest.approx(1.0)
    assert len(left) == 57


def test_trials_outside_recording_dropped_single_trial_and_no_events():
    spikes = SpikeArrays.from_arrays(["a"] * 5, [0.2, 1.1, 1.15, 2.05, 3.0])
    events = pd.DataFrame({"time_s": [0.1, 1.0, 2.0, 9.0], "condition": ["x", "x", "y", "x"]})
    w = SlidingWindows(start_s=-0.05, stop_s=0.25, width_s=0.1, step_s=0.1)
    table = fano_timecourse_table(spikes, events, windows=w, recording_s=(0.0, 3.0))
    x = table[table["condition"] == "x"]
    assert (x["n_trials"] == 2).all() and (x["n_trials_dropped"] == 1).all()
    y = table[table["condition"] == "y"]
    assert (y["n_trials"] == 1).all()
    assert y["var_count"].isna().all() and (y["fano_reason"] == "single trial").all()
    assert np.allclose(x["time_s"], [0.0, 0.1, 0.2])
    empty = fano_timecourse_table(spikes, events.iloc[:0], windows=w, recording_s=(0.0, 3.0))
    assert len(empty) == 0 and "fano" in empty.columns


def test_gain_variability_fano_drops_after_event():
    # Doubly stochastic Poisson: FF = 1 + sigma_G^2 mu (Goris, Movshon & Simoncelli 2014 Nat
    # Neurosci 17:858; formula recalled from memory). Driven responses carry less gain
    # variance in the simulator, so the Fano factor falls after the event while the mean rises
    # (the drop at stimulus onset of Churchland et al. 2010 Nat Neurosci 13:369).
    rng = np.random.default_rng(4)
    events = np.arange(2.0, 2.0 + 3.0 * 300, 3.0)
    units, times = simulate.event_locked_population(
        n_units=6, event_times_s=events, baseline_hz=10.0, amplitude_hz=40.0, gain_cv=0.6,
        driven_gain_cv=0.0, rng=rng)
    spikes = SpikeArrays.from_arrays(units, times)
    ev = pd.DataFrame({"time_s": events, "condition": "flash"})
    w = SlidingWindows(start_s=-0.4, stop_s=0.4, width_s=0.2, step_s=0.1)
    table = fano_timecourse_table(spikes, ev, windows=w, recording_s=(0.0, times.max()))
    by_time = table.groupby("time_s")[["fano", "mean_count"]].mean()
    pre, post = by_time.loc[-0.3], by_time.loc[0.2]
    assert pre["fano"] == pytest.approx(1 + 0.36 * pre["mean_count"], rel=0.15)
    assert post["mean_count"] > pre["mean_count"] * 2
    assert post["fano"] < pre["fano"] - 0.2


def test_two_alignments_and_a_missing_time():
    # a unit that fires 0.1 s after each lick: aligned on the lick its counts peak at 0.1 s,
    # aligned on the flash (0.5 s before) the peak moves to 0.6 s; trials without a lick time
    # leave the lick alignment only, and are counted
    from spikevar.metrics.session import timecourse_table

    flashes = np.arange(2.0, 200.0, 2.0)
    licks = flashes + 0.5
    licks[::5] = np.nan
    spikes_t = np.sort(np.concatenate([licks[np.isfinite(licks)] + 0.1,
                                       np.arange(0.0, 202.0, 0.37)]))
    spikes = SpikeArrays.from_arrays(np.full(len(spikes_t), "u"), spikes_t)
    events = pd.DataFrame({"time_s": flashes, "condition": "flash"})
    table = timecourse_table(spikes, events, windows=SlidingWindows(-0.2, 1.0, 0.1, 0.1),
                             alignments={"time": flashes, "lick_time": licks},
                             span=(0.0, 202.0))
    by = {name: part.set_index("time_s") for name, part in table.groupby("alignment")}
    assert by["lick_time"]["rate_hz"].idxmax() == pytest.approx(0.15)
    assert by["time"]["rate_hz"].idxmax() == pytest.approx(0.65)
    assert (by["lick_time"]["n_trials_no_time"] == 20).all()
    assert (by["time"]["n_trials_no_time"] == 0).all()
    assert (by["lick_time"]["n_trials"] == len(flashes) - 20).all()


def test_alignment_column_errors_name_the_column():
    from spikevar.base.errors import SpikevarInputError
    from spikevar.metrics.session import alignment_times

    events = pd.DataFrame({"time_s": [1.0, 2.0], "condition": "a", "lick": ["1.5", "soon"]})
    with pytest.raises(SpikevarInputError, match="no column 'reward'") as err:
        alignment_times(events, ["reward"], event_time_column="time", seconds_per_unit=1.0,
                        session="s1", path="e.csv")
    assert "s1" in str(err.value) and "e.csv" in str(err.value)
    with pytest.raises(SpikevarInputError, match="not times"):
        alignment_times(events, ["lick"], event_time_column="time", seconds_per_unit=1.0,
                        session="s1", path="e.csv")
    ms = alignment_times(events.assign(lick=[1500, None]), ["time", "lick"],
                         event_time_column="time", seconds_per_unit=1e-3, session="s1",
                         path="e.csv")
    assert ms["lick"][0] == pytest.approx(1.5) and np.isnan(ms["lick"][1])
