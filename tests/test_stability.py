"""Stability over the session: unit_blocks against a loop, and the drift test's error rates on
simulated units whose truth is known."""

import numpy as np
import pytest

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.settings import StabilitySettings
from spikevar.metrics.stability import block_edges, block_statistics, stable_flags
from spikevar.synth import simulate

DURATION = 1800.0  # 30 min
RATE = 5.0


def cohort_of(kind: str, n_units: int, seed: int) -> SpikeArrays:
    rng = np.random.default_rng(seed)
    units, times = [], []
    half = np.array([0.0, DURATION / 2, DURATION / 2 + 1e-6, DURATION])
    for i in range(n_units):
        if kind == "poisson":
            t = simulate.renewal_train(simulate.PoissonISI(RATE), duration_s=DURATION, rng=rng)
        elif kind == "gamma4":
            t = simulate.renewal_train(simulate.GammaISI(RATE, 4.0), duration_s=DURATION,
                                       rng=rng)
        else:  # the rate halves at mid-session
            model = simulate.PoissonISI(RATE) if kind == "drop" else simulate.GammaISI(RATE, 4)
            t = simulate.modulated_renewal_train(model, grid_s=half,
                                                 rate_hz=np.array([RATE, RATE, RATE / 2,
                                                                   RATE / 2]), rng=rng)
        units.append(np.full(len(t), f"u{i:03d}"))
        times.append(t)
    return SpikeArrays.from_arrays(np.concatenate(units), np.concatenate(times))


def drift_pvalues(kind: str, n_units: int = 400, seed: int = 0) -> np.ndarray:
    spikes = cohort_of(kind, n_units, seed)
    _, drift = block_statistics(spikes, start_s=0.0, stop_s=DURATION,
                                settings=StabilitySettings())
    return drift["rate_drift_pvalue"].to_numpy()


@pytest.mark.parametrize("kind", ["poisson", "gamma4"])
def test_stationary_units_are_rarely_called_unstable(kind):
    # Truth: stationary renewal trains (Poisson; gamma with shape 4, CV^2 = 1/4), 30 min at
    # 5 Hz, 400 units. The count variance of a long block is about CV^2 x mean for a renewal
    # process (Cox 1962, Renewal Theory, ch. 9), which the test allows for; without that,
    # gamma units would be called stable far too often and Poisson ones correctly.
    p = drift_pvalues(kind)
    assert np.isfinite(p).all()
    mc = 2.5 * np.sqrt(0.05 * 0.95 / len(p))  # Monte-Carlo allowance, 2.5 standard errors
    assert np.mean(p < 0.05) <= 0.05 + mc
    default = StabilitySettings().alpha
    assert np.mean(~stable_flags(p, alpha=default)) <= default + 2.5 * np.sqrt(
        default * (1 - default) / len(p))
    # the p-values are uniform under the null: not only the tail is right
    assert abs(np.mean(p < 0.5) - 0.5) < 0.08


@pytest.mark.parametrize("kind", ["drop", "drop_gamma4"])
def test_a_rate_that_halves_mid_session_is_found(kind):
    p = drift_pvalues(kind, n_units=200, seed=1)
    assert np.mean(p < 0.05) >= 0.95
    assert np.mean(~stable_flags(p, alpha=StabilitySettings().alpha)) >= 0.95


def test_unit_blocks_match_a_loop():
    rng = np.random.default_rng(5)
    spikes = SpikeArrays.from_arrays(
        np.repeat(["a", "b"], [400, 150]),
        np.concatenate([np.sort(rng.uniform(0, 250, 400)), np.sort(rng.uniform(30, 200, 150))]))
    settings = StabilitySettings(block_s=60.0, subwindow_s=5.0)
    blocks, _ = block_statistics(spikes, start_s=0.0, stop_s=250.0, settings=settings)
    edges = block_edges(0.0, 250.0, 60.0)
    assert list(edges) == [0, 60, 120, 180, 240, 250]
    for row in blocks.itertuples():
        t = spikes.times[spikes.labels[spikes.codes] == row.unit]
        lo, hi = edges[row.block], edges[row.block + 1]
        inside = t[(t >= lo) & ((t < hi) | ((hi == 250.0) & (t <= hi)))]
        assert row.n_spikes == len(inside)
        assert row.rate_hz == pytest.approx(len(inside) / (hi - lo))
        isi = np.diff(inside)
        if len(isi) >= 2:
            cv2 = np.mean(2 * np.abs(isi[1:] - isi[:-1]) / (isi[1:] + isi[:-1]))
            assert row.isi_cv2 == pytest.approx(cv2)
        n_sub = int((hi - lo) // 5.0)
        counts = np.histogram(inside, bins=lo + 5.0 * np.arange(n_sub + 1))[0]
        if n_sub >= 2 and counts.mean() > 0:
            assert row.fano == pytest.approx(counts.var(ddof=1) / counts.mean())
        else:
            assert np.isnan(row.fano)


def test_untestable_units_say_why_and_are_not_stable():
    rng = np.random.default_rng(2)
    spikes = SpikeArrays.from_arrays(["a"] * 20 + ["b"] * 3000,
                                     np.concatenate([np.sort(rng.uniform(0, 600, 20)),
                                                     np.sort(rng.uniform(0, 600, 3000))]))
    _, drift = block_statistics(spikes, start_s=0.0, stop_s=600.0,
                                settings=StabilitySettings(block_s=60.0))
    drift = drift.set_index("unit")
    assert np.isnan(drift.loc["a", "rate_drift_pvalue"])
    assert "expected spikes" in drift.loc["a", "rate_drift_reason"]
    assert drift.loc["b", "rate_drift_reason"] == ""
    one_block = block_statistics(spikes, start_s=0.0, stop_s=600.0,
                                 settings=StabilitySettings(block_s=700.0))[1]
    assert (one_block["rate_drift_reason"] == "fewer than 2 blocks of the recording").all()
    assert not stable_flags(one_block["rate_drift_pvalue"], alpha=0.01).any()
