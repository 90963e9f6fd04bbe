"""Group summaries and group differences of unit metrics with hierarchical-bootstrap intervals."""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pandas as pd

from spikevar.cohort.bootstrap import bootstrap_mean_median
from spikevar.cohort.permutation import permutation_test_mean

#: comparisons with fewer subjects than this in a group are flagged (bootstrap intervals are
#: too narrow there; the permutation p-value stays valid)
FEW_SUBJECTS = 5

METRICS = {
    "rate_hz": "firing rate (Hz)",
    "isi_cv": "ISI CV",
    "isi_cv2": "CV2",
    "isi_lv": "LV",
    "isi_lvr": "LvR",
    "fano_long": "count Fano factor, longest window",
    "recovery_tau_s": "recovery time constant tau (s)",
    "dead_time_s": "dead time d (s)",
}


def unit_metric_frame(units: pd.DataFrame, count_fano: pd.DataFrame,
                      recovery: pd.DataFrame) -> pd.DataFrame:
    """One row per unit with every summarised metric (cohort tables as input).

    Units of a cohort table with ``included`` False are left out (config ``inclusion``).
    ``fano_long`` is the Fano factor at the longest counting window; ``recovery_tau_s`` and
    ``dead_time_s`` come from the converged stationary ``exp_recovery`` fit (NaN otherwise).
    A tau at either bound of its search range (``tau_at_bound`` lower or upper) is a limit, not
    a measurement: it is left out of the tau summaries, and ``tau_at_bound`` is kept so that
    the summaries can count such units.
    """
    key = ["session", "unit"]
    if "included" in units.columns:  # the cohort table: the included units only
        units = units[units["included"].astype(bool)]
    frame = units[["session", "subject", "group", "unit", "rate_hz", "isi_cv", "isi_cv2",
                   "isi_lv", "isi_lvr"]].copy()
    if len(count_fano):
        longest = count_fano["window_s"].max()
        ff = count_fano.loc[count_fano["window_s"] == longest, key + ["fano"]]
        frame = frame.merge(ff.rename(columns={"fano": "fano_long"}), on=key, how="left")
    else:
        frame["fano_long"] = np.nan
    if len(recovery):
        rec = recovery[(recovery["model"] == "exp_recovery")
                       & (recovery["fit_kind"] == "stationary") & recovery["converged"]]
        if "tau_at_bound" not in rec.columns:
            rec = rec.assign(tau_at_bound="")
        frame = frame.merge(rec[key + ["recovery_tau_s", "dead_time_s", "tau_at_bound"]],
                            on=key, how="left")
        frame["tau_at_bound"] = frame["tau_at_bound"].fillna("")
        frame.loc[frame["tau_at_bound"] != "", "recovery_tau_s"] = np.nan
    else:
        frame["recovery_tau_s"] = frame["dead_time_s"] = np.nan
        frame["tau_at_bound"] = ""
    return frame


def _boot(values, subject, session, *, n_boot, rng):
    return bootstrap_mean_median(values, subject, session, n_boot=n_boot, rng=rng)


def _pct(x, q):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return np.nanpercentile(x, q) if np.isfinite(x).any() else np.nan


def group_summary(frame: pd.DataFrame, *, n_boot: int, seed: int | None = None,
                  metrics: dict[str, str] | None = None,
                  rng: np.random.Generator | None = None) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Per metric x group: n, mean, median with 95% hierarchical-bootstrap intervals; per
    metric x pair of groups: differences of means and medians with intervals and p-values.

    Notes
    -----
    NaN metric values (units without that metric) are left out and counted. A group with no
    usable unit gives NaN with ``summary_reason``; a group with a single subject is computed but
    flagged, because its interval cannot include animal-to-animal variability. The two-sided
    bootstrap p-value is ``2 min(P(diff* <= 0), P(diff* >= 0))`` (at least ``1 / n_boot``).
    With few subjects per group the hierarchical bootstrap's intervals are too narrow and its
    p-values too small (measured: 15% below 0.05 at 3 animals per group with no difference), so
    every difference also gets ``p_permutation`` (subjects permuted between the two groups,
    exact when the arrangements are few; :mod:`spikevar.cohort.permutation`) with its smallest
    attainable value, and ``few_subjects`` flags groups with fewer than ``FEW_SUBJECTS``
    subjects. ``n_tau_at_bound`` counts units whose tau ended at a bound (left out of tau).

    ``metrics`` (column -> label; default :data:`METRICS`) and ``rng`` (default: one seeded by
    ``seed``) let other tables reuse the same summary; a frame with one row per session (a
    population statistic) is resampled subject > session, its single "unit" kept.
    """
    rng = np.random.default_rng(seed) if rng is None else rng
    summary, diffs = [], []
    groups = sorted(frame["group"].astype(str).unique())
    for metric, label in (METRICS if metrics is None else metrics).items():
        boots = {}
        for group in groups:
            part = frame[(frame["group"].astype(str) == group) & frame[metric].notna()]
            n_subj = part["subject"].nunique()
            in_group = frame["group"].astype(str) == group
            at_bound = int((frame.loc[in_group, "tau_at_bound"] != "").sum()) \
                if metric == "recovery_tau_s" and "tau_at_bound" in frame else 0
            row = {"metric": metric, "metric_label": label, "group": group,
                   "n_units": len(part), "n_sessions": part["session"].nunique(),
                   "n_subjects": n_subj, "n_tau_at_bound": at_bound}
            if len(part) == 0:
                summary.append({**row, "mean": np.nan, "mean_ci_lo": np.nan,
                                "mean_ci_hi": np.nan, "median": np.nan, "median_ci_lo": np.nan,
                                "median_ci_hi": np.nan, "summary_reason": "no usable unit"})
                continue
            values = part[metric].to_numpy(float)
            b_mean, b_median = _boot(values, part["subject"].to_numpy(),
                                     part["session"].to_numpy(), n_boot=n_boot, rng=rng)
            boots[group] = (b_mean, b_median)
            summary.append({**row, "mean": float(values.mean()),
                            "mean_ci_lo": _pct(b_mean, 2.5), "mean_ci_hi": _pct(b_mean, 97.5),
                            "median": float(np.median(values)),
                            "median_ci_lo": _pct(b_median, 2.5),
                            "median_ci_hi": _pct(b_median, 97.5),
                            "summary_reason": "single subject: interval excludes "
                            "animal-to-animal variability" if n_subj == 1 else ""})
        for a, b in itertools.combinations(groups, 2):
            row = {"metric": metric, "group_a": a, "group_b": b}
            if a not in boots or b not in boots:
                diffs.append({**row, "diff_mean": np.nan, "diff_mean_ci_lo": np.nan,
                              "diff_mean_ci_hi": np.nan, "p_mean": np.nan, "diff_median": np.nan,
                              "diff_median_ci_lo": np.nan, "diff_median_ci_hi": np.nan,
                              "p_median": np.nan, "p_permutation": np.nan,
                              "p_permutation_min": np.nan, "permutation_exact": False,
                              "few_subjects": True,
                              "difference_reason": "a group has no usable unit"})
                continue
            va = frame.loc[(frame["group"].astype(str) == a), metric].dropna()
            vb = frame.loc[(frame["group"].astype(str) == b), metric].dropna()
            out = {}
            for k, name in enumerate(("mean", "median")):
                d = boots[a][k] - boots[b][k]
                point = (va.mean() - vb.mean()) if name == "mean" else (va.median() - vb.median())
                p = 2 * min(np.mean(d <= 0), np.mean(d >= 0))
                out.update({f"diff_{name}": float(point), f"diff_{name}_ci_lo": _pct(d, 2.5),
                            f"diff_{name}_ci_hi": _pct(d, 97.5),
                            f"p_{name}": float(min(1.0, max(p, 1.0 / n_boot)))})
            out.update(_permutation_columns(frame, metric, a, b, rng=rng))
            diffs.append({**row, **out, "difference_reason": ""})
    if not diffs:  # one group: nothing to compare, an empty table of the usual columns
        from spikevar.cohort.data_dictionary import TABLES

        diffs = {c: pd.Series(dtype=object) for c in TABLES["group_differences"]}
    return pd.DataFrame(summary), pd.DataFrame(diffs)


def _permutation_columns(frame: pd.DataFrame, metric: str, a: str, b: str, *,
                         rng: np.random.Generator) -> dict:
    """p_permutation of the mean difference between groups a and b, subjects permuted."""
    groups = frame["group"].astype(str)
    part = frame[groups.isin([a, b]) & frame[metric].notna()]
    subjects = part["subject"].astype(str) + "\x00" + part["group"].astype(str)
    names, codes = np.unique(subjects.to_numpy(), return_inverse=True)
    in_a = np.array([name.endswith("\x00" + a) for name in names])
    n_a, n_b = int(in_a.sum()), int((~in_a).sum())
    p, smallest, exact = permutation_test_mean(part[metric].to_numpy(float), codes, in_a,
                                               rng=rng)
    return {"p_permutation": p, "p_permutation_min": smallest, "permutation_exact": exact,
            "few_subjects": bool(min(n_a, n_b) < FEW_SUBJECTS)}
