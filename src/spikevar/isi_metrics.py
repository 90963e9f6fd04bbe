"""Per-unit interval statistics over a whole recording, vectorised over all units at once.

All functions take :class:`~spikevar.spike_arrays.SpikeArrays` (sorted by unit then time) and
compute every unit in one pass with ``np.bincount``; there is no loop over spikes or units.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.spike_arrays import SpikeArrays

REASON_FEW_SPIKES = "fewer than 3 spikes"
REASON_ZERO_DURATION = "zero-length recording"


def _pairs(spikes: SpikeArrays):
    """ISIs with their unit code, and consecutive-ISI pairs with theirs."""
    same = spikes.codes[1:] == spikes.codes[:-1]
    isi = np.diff(spikes.times)[same]
    isi_unit = spikes.codes[1:][same]
    pair_same = isi_unit[1:] == isi_unit[:-1]
    a, b = isi[:-1][pair_same], isi[1:][pair_same]
    pair_unit = isi_unit[1:][pair_same]
    return isi, isi_unit, a, b, pair_unit


def _per_unit_mean(values, codes, n_units):
    count = np.bincount(codes, minlength=n_units).astype(float)
    total = np.bincount(codes, weights=values, minlength=n_units)
    with np.errstate(invalid="ignore", divide="ignore"):
        return total / count, count


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


def unit_isi_table(
    spikes: SpikeArrays,
    *,
    duration_s: float,
    lvr_refractory_s: float = 0.005,
    refractory_threshold_s: float = 0.0015,
    censored_period_s: float = 0.0,
) -> pd.DataFrame:
    """One row per unit: counts, rate and ISI variability measures.

    Parameters
    ----------
    spikes
        The session's spikes.
    duration_s
        Recording length used for ``rate_hz`` and the contamination estimate.
    lvr_refractory_s
        Refractoriness constant R of LvR (Shinomoto et al. 2009 recommend 5 ms).
    refractory_threshold_s
        ISIs shorter than this count as refractory-period violations.
    censored_period_s
        Sorter's censored period after each spike (Hill et al. 2011 tC), usually 0.

    Returns
    -------
    DataFrame
        ``unit, n_spikes, duration_s, rate_hz, mean_isi_s, isi_cv, isi_cv2, isi_lv, isi_lvr,
        refractory_violation_fraction, n_refractory_violations, contamination_hill,
        contamination_flag, isi_reason``.

    Notes
    -----
    - ``isi_cv`` = SD/mean of the ISIs with the unbiased variance (ddof = 1).
    - ``isi_cv2`` = mean of ``2 |I_{i+1} - I_i| / (I_{i+1} + I_i)`` (Holt et al. 1996).
    - ``isi_lv`` = ``3/(n-1) sum ((I_i - I_{i+1}) / (I_i + I_{i+1}))^2`` over the ``n - 1``
      consecutive pairs of ``n`` ISIs (Shinomoto et al. 2003, eq. 2.2).
    - ``isi_lvr`` = ``3/(n-1) sum (1 - 4 I_i I_{i+1} / (I_i + I_{i+1})^2)
      (1 + 4 R / (I_i + I_{i+1}))`` (Shinomoto et al. 2009, eq. 3).
    - Units with fewer than 3 spikes (fewer than two ISIs) get NaN for every ISI measure and
      ``isi_reason = "fewer than 3 spikes"``. A zero or negative ``duration_s`` gives NaN rate
      and ``"zero-length recording"``. Two spikes at the same time give an ISI of 0; a pair of
      zero ISIs has an undefined ratio and is left out of CV2/LV/LvR.
    """
    n_units = spikes.n_units
    n_spikes = np.bincount(spikes.codes, minlength=n_units)
    isi, isi_unit, a, b, pair_unit = _pairs(spikes)
    mean_isi, n_isi = _per_unit_mean(isi, isi_unit, n_units)
    sq, _ = _per_unit_mean(isi**2, isi_unit, n_units)
    with np.errstate(invalid="ignore", divide="ignore"):
        var = (sq - mean_isi**2) * n_isi / (n_isi - 1)
        cv = np.sqrt(np.maximum(var, 0.0)) / mean_isi
        total = a + b
        ok = total > 0
        pa_, pb, pu, pt = a[ok], b[ok], pair_unit[ok], total[ok]
        cv2, _ = _per_unit_mean(2 * np.abs(pb - pa_) / pt, pu, n_units)
        lv_sum = np.bincount(pu, weights=((pa_ - pb) / pt) ** 2, minlength=n_units)
        lvr_terms = (1 - 4 * pa_ * pb / pt**2) * (1 + 4 * lvr_refractory_s / pt)
        lvr_sum = np.bincount(pu, weights=lvr_terms, minlength=n_units)
        n_pairs = np.bincount(pu, minlength=n_units).astype(float)
        lv = 3 * lv_sum / n_pairs
        lvr = 3 * lvr_sum / n_pairs
        violations = np.bincount(isi_unit, weights=(isi < refractory_threshold_s),
                                 minlength=n_units)
        violation_fraction = violations / n_isi
    few = n_spikes < 3
    for arr in (cv, cv2, lv, lvr, mean_isi):
        arr[few | (n_pairs == 0)] = np.nan
    violation_fraction[n_isi == 0] = np.nan
    zero = not duration_s > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        rate = n_spikes / duration_s if not zero else np.full(n_units, np.nan)
    contamination, flag = hill_contamination(
        n_violations=violations, n_spikes=n_spikes, duration_s=duration_s,
        refractory_s=refractory_threshold_s, censored_s=censored_period_s)
    reason = np.where(few, REASON_FEW_SPIKES, "")
    if zero:
        reason = np.where(reason == "", REASON_ZERO_DURATION, reason)
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
        "isi_reason": reason.astype(object),
    })
