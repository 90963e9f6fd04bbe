"""One recording span for every rate, window, censored interval and event check."""

import numpy as np
import pandas as pd
import pytest

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.session import compute_tables
from spikevar.metrics.settings import MetricSettings, SlidingWindows
from spikevar.recovery.settings import RecoverySettings
from spikevar.recovery.table import recovery_table
from spikevar.synth import simulate


def session(offset, rng_seed=4):
    rng = np.random.default_rng(rng_seed)
    units, times = [], []
    for k, model in enumerate([simulate.ExpRecoveryISI(30.0, 0.004, 0.001),
                               simulate.GammaISI(12.0, 2.0)]):
        t = simulate.renewal_train(model, duration_s=300.0, rng=rng)
        units.append(np.full(len(t), f"u{k}"))
        times.append(t)
    events = pd.DataFrame({"time_s": np.arange(5.0, 295.0, 3.0) + offset,
                           "condition": "dim"})
    spikes = SpikeArrays.from_arrays(np.concatenate(units), np.concatenate(times) + offset)
    return spikes, events


def test_offset_session_gives_the_tables_of_the_same_spikes_at_zero():
    # spikes in [1000, 1300] s with start_s = 1000, duration_s = 300: before, every count-Fano
    # row was NaN, every trial dropped and censored intervals clipped, without a message
    late, late_events = session(1000.0)
    early, early_events = session(0.0)
    kw = dict(settings=MetricSettings(), windows=SlidingWindows())
    a = compute_tables(late, late_events, span=(1000.0, 1300.0), **kw)
    b = compute_tables(early, early_events, span=(0.0, 300.0), **kw)
    clock = {"units": ["first_spike_s", "last_spike_s"], "unit_blocks": ["block_start_s"]}
    for name in ("units", "count_fano", "unit_blocks", "fano_timecourse"):
        times = clock.get(name, [])
        # times on the session's clock move with it; everything else is the same
        np.testing.assert_allclose(a[name][times].to_numpy(float) - 1000.0,
                                   b[name][times].to_numpy(float), rtol=1e-9)
        pd.testing.assert_frame_equal(a[name].drop(columns=times), b[name].drop(columns=times),
                                      check_exact=False, rtol=1e-9, obj=name)
    assert a["count_fano"]["fano"].notna().all()
    assert (a["fano_timecourse"]["n_trials"] == len(late_events)).all()
    settings = RecoverySettings(modulated_fit=False, tau_interval=False)
    ra = recovery_table(late, span_s=(1000.0, 1300.0), settings=settings)
    rb = recovery_table(early, span_s=(0.0, 300.0), settings=settings)
    numeric = ["asymptotic_rate_hz", "recovery_tau_s", "dead_time_s", "log_likelihood"]
    np.testing.assert_allclose(ra[numeric].to_numpy(float), rb[numeric].to_numpy(float),
                               rtol=1e-6)
    assert (ra["preferred"] == rb["preferred"]).all()


def test_rates_use_the_declared_span_not_the_spikes():
    spikes, events = session(1000.0)
    units = compute_tables(spikes, events, settings=MetricSettings(),
                           windows=SlidingWindows(), span=(1000.0, 1600.0))["units"]
    assert units["duration_s"].tolist() == pytest.approx([600.0, 600.0])
    assert units["rate_hz"].iloc[0] == pytest.approx(units["n_spikes"].iloc[0] / 600.0)
