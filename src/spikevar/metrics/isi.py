"""Per-unit interval statistics over a whole recording, vectorised over all units at once.

All functions take :class:`~spikevar.base.spike_arrays.SpikeArrays` (sorted by unit then time).
Units are processed in blocks of about two million spikes (bounding memory), and within a block
every unit at once with segment sums (``np.add.reduceat``); there is no loop over spikes.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.segments import drop_boundaries, segment_sums, unit_blocks
from spikevar.metrics.settings import MetricSettings

REASON_FEW_SPIKES = "fewer than 3 spikes"
REASON_ZERO_DURATION = "zero-length recording"


def _block_sums(times: np.ndarray, offsets: np.ndarray, *, lvr_refractory_s: float,
                refractory_threshold_s: float) -> dict[str, np.ndarray]:
    """Per-unit sums needed by the ISI measures, for one block of whole units."""
    isi, isi_off = drop_boundaries(np.diff(times), offsets)
    n_isi = np.diff(isi_off).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = segment_sums(isi, isi_off) / n_isi
    dev = isi - np.repeat(np.nan_to_num(mean), np.diff(isi_off))
    sq_dev = segment_sums(dev * dev, isi_off)
    violations = segment_sums((isi < refractory_threshold_s).astype(float), isi_off)
    # consecutive pairs (I_i, I_{i+1}) inside each unit: a unit with m ISIs has m - 1 pairs
    pair_off = np.concatenate([[0], np.cumsum(np.maximum(np.diff(isi_off) - 1, 0))])
    breaks = _pair_breaks(isi_off)
    a = np.delete(isi[:-1], breaks) if len(isi) > 1 else np.zeros(0)
    b = np.delete(isi[1:], breaks) if len(isi) > 1 else np.zeros(0)
    total = a + b
    ok = total > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        cv2_terms = np.where(ok, 2 * np.abs(b - a) / total, 0.0)
        lv_terms = np.where(ok, ((a - b) / total) ** 2, 0.0)
        lvr_terms = np.where(ok, (1 - 4 * a * b / total**2) * (1 + 4 * lvr_refractory_s / total),
                             0.0)
    return {
        "n_isi": n_isi, "mean_isi": mean, "sq_dev": sq_dev, "violations": violations,
        "n_pairs": segment_sums(ok.astype(float), pair_off),
        "cv2_sum": segment_sums(cv2_terms, pair_off),
        "lv_sum": segment_sums(lv_terms, pair_off),
        "lvr_sum": segment_sums(lvr_terms, pair_off),
    }


def _pair_breaks(isi_off: np.ndarray) -> np.ndarray:
    """Positions in ``isi[:-1]`` whose pair (i, i + 1) straddles two units."""
    inner = isi_off[1:-1]
    return inner[(inner > 0) & (inner < isi_off[-1])] - 1


def hill_contamination(*, n_violations, n_spikes, duration_s, refractory_s, censored_s=0.0):
    """Contamination fraction from refractory-period violations (Hill et al. 2011).

    Solves ``r = 2 (tR - tC) N^2 f (1 - f) / T`` for the smaller root ``f``.

    Returns
    -------
    fraction, flag : ndarray, ndarray of str
        ``flag`` is ``""`` when defined, ``"no real solution"`` when ``4 a > 1`` (more violations
        than any contamination in [0, 0.5] can explain) and ``"undefined"`` when there are no
        spikes or no duration; ``fraction`` is NaN where flagged.

    Notes
    -----
    Hill, Mehta & Kleinfeld 2011, J Neurosci 31:8699. ``f`` is the fraction of spikes from other
    neurons, assuming they fire independently of the unit.
    """
    n_violations = np.asarray(n_violations, dtype=float)
    n_spikes = np.asarray(n_spikes, dtype=float)
    duration_s = np.broadcast_to(np.asarray(duration_s, dtype=float), n_spikes.shape)
    window = 2.0 * (refractory_s - censored_s)
    with np.errstate(invalid="ignore", divide="ignore"):
        a = n_violations * duration_s / (window * n_spikes**2)
        disc = 1.0 - 4.0 * a
        fraction = 0.5 * (1.0 - np.sqrt(np.where(disc >= 0, disc, np.nan)))
    undefined = (n_spikes < 1) | ~(duration_s > 0)
    flag = np.where(undefined, "undefined", np.where(disc < 0, "no real solution", ""))
    fraction = np.where(flag == "", fraction, np.nan)
    return fraction, flag


def poisson_contamination(*, n_violations, n_spikes, duration_s, refractory_s, censored_s=0.0):
    """Contamination fraction when the contaminating spikes form a Poisson process.

    ``c = 1 - sqrt(1 - r T / (N^2 (tR - tC)))`` (Llobet et al. 2022, bioRxiv; formula recalled
    from memory and checked here by simulation with known truth). Hill et al. 2011 instead
    assume one contaminating neuron that is itself refractory; with many small contaminating
    sources (multi-unit background) the Poisson form is the apt one.

    Returns
    -------
    fraction, flag : ndarray, ndarray of str
        As :func:`hill_contamination`: ``"no real solution"`` when ``r T / (N^2 (tR - tC)) > 1``.
    """
    n_violations = np.asarray(n_violations, dtype=float)
    n_spikes = np.asarray(n_spikes, dtype=float)
    duration_s = np.broadcast_to(np.asarray(duration_s, dtype=float), n_spikes.shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = n_violations * duration_s / (n_spikes**2 * (refractory_s - censored_s))
        fraction = 1.0 - np.sqrt(np.where(share <= 1, 1.0 - share, np.nan))
    undefined = (n_spikes < 1) | ~(duration_s > 0)
    flag = np.where(undefined, "undefined", np.where(~(share <= 1), "no real solution", ""))
    return np.where(flag == "", fraction, np.nan), flag


def unit_isi_table(
    spikes: SpikeArrays,
    *,
    duration_s: float,
    settings: MetricSettings | None = None,
) -> pd.DataFrame:
    """One row per unit: counts, rate and ISI variability measures.

    Parameters
    ----------
    spikes
        The session's spikes.
    duration_s
        Recording length used for ``rate_hz`` and the contamination estimate.
    settings
        Config ``metrics``: ``lvr_refractory_s`` (R of LvR; Shinomoto et al. 2009 recommend
        5 ms), ``refractory_threshold_s`` (ISIs shorter than this are violations) and
        ``censored_period_s`` (Hill et al. 2011 tC, usually 0).

    Returns
    -------
    DataFrame
        ``unit, n_spikes, duration_s, rate_hz, mean_isi_s, isi_cv, isi_cv2, isi_lv, isi_lvr,
        refractory_violation_fraction, n_refractory_violations, contamination_hill,
        contamination_flag, contamination_poisson, contamination_poisson_flag, isi_reason``.

    Notes
    -----
    - ``isi_cv`` = SD/mean of the ISIs with the unbiased variance (ddof = 1).
    - ``isi_cv2`` = mean of ``2 |I_{i+1} - I_i| / (I_{i+1} + I_i)`` (Holt et al. 1996).
    - ``isi_lv`` = ``3/(n-1) sum ((I_i - I_{i+1}) / (I_i + I_{i+1}))^2`` over the ``n - 1``
      consecutive pairs of ``n`` ISIs (Shinomoto et al. 2003, eq. 2.2).
    - ``isi_lvr`` = ``3/(n-1) sum (1 - 4 I_i I_{i+1} / (I_i + I_{i+1})^2)
      (1 + 4 R / (I_i + I_{i+1}))`` (Shinomoto et al. 2009, eq. 3).
    - Units with fewer than 3 spikes (fewer than two ISIs) get NaN for every ISI measure and
      ``isi_reason = "fewer than 3 spikes"``. A zero or negative ``duration_s`` (or one so short
      that the rate overflows) gives NaN rate and ``"zero-length recording"``. Two spikes at the
      same time give an ISI of 0; a pair of zero ISIs has an undefined ratio and is left out of
      CV2/LV/LvR.
    """
    settings = settings or MetricSettings()  # its defaults are the config's defaults
    lvr_refractory_s = settings.lvr_refractory_s
    refractory_threshold_s = settings.refractory_threshold_s
    censored_period_s = settings.censored_period_s
    n_units = spikes.n_units
    offsets = spikes.bounds()
    n_spikes = np.diff(offsets)
    parts = []
    for first, stop in unit_blocks(offsets):
        lo, hi = offsets[first], offsets[stop]
        parts.append(_block_sums(spikes.times[lo:hi], offsets[first:stop + 1] - lo,
                                 lvr_refractory_s=lvr_refractory_s,
                                 refractory_threshold_s=refractory_threshold_s))
    sums = {key: np.concatenate([p[key] for p in parts]) if parts else np.zeros(0)
            for key in ("n_isi", "mean_isi", "sq_dev", "violations", "n_pairs", "cv2_sum",
                        "lv_sum", "lvr_sum")}
    n_isi, mean_isi, n_pairs = sums["n_isi"], sums["mean_isi"], sums["n_pairs"]
    violations = sums["violations"]
    with np.errstate(invalid="ignore", divide="ignore"):
        cv = np.sqrt(sums["sq_dev"] / (n_isi - 1)) / mean_isi
        cv2 = sums["cv2_sum"] / n_pairs
        lv = 3 * sums["lv_sum"] / n_pairs
        lvr = 3 * sums["lvr_sum"] / n_pairs
        violation_fraction = violations / n_isi
    few = n_spikes < 3
    for arr in (cv, cv2, lv, lvr, mean_isi):
        arr[few | (n_pairs == 0)] = np.nan
    violation_fraction[n_isi == 0] = np.nan
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        rate = n_spikes / duration_s if duration_s > 0 else np.full(n_units, np.nan)
    no_rate = ~np.isfinite(rate)  # no span, or one too short for a finite rate
    rate[no_rate] = np.nan
    poisson_c, poisson_flag = poisson_contamination(
        n_violations=violations, n_spikes=n_spikes, duration_s=duration_s,
        refractory_s=refractory_threshold_s, censored_s=censored_period_s)
    contamination, flag = hill_contamination(
        n_violations=violations, n_spikes=n_spikes, duration_s=duration_s,
        refractory_s=refractory_threshold_s, censored_s=censored_period_s)
    reason = np.where(few, REASON_FEW_SPIKES, np.where(no_rate, REASON_ZERO_DURATION, ""))
    return pd.DataFrame({
        "unit": spikes.labels.astype(object),
        "n_spikes": n_spikes.astype(np.int64),
        "duration_s": np.full(n_units, float(duration_s)),
        "rate_hz": rate,
        "mean_isi_s": mean_isi,
        "isi_cv": cv,
        "isi_cv2": cv2,
        "isi_lv": lv,
        "isi_lvr": lvr,
        "refractory_violation_fraction": violation_fraction,
        "n_refractory_violations": violations.astype(np.int64),
        "contamination_hill": contamination,
        "contamination_flag": flag.astype(object),
        "contamination_poisson": poisson_c,
        "contamination_poisson_flag": poisson_flag.astype(object),
        "isi_reason": reason.astype(object),
    })
