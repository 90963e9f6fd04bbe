"""Population Fano factors over time: variance-on-mean regression and mean matching.

Input: the cohort ``fano_timecourse`` table (one row per unit x condition x window, with the
across-trial ``mean_count``, ``var_count`` and ``n_trials``). For every group x condition x
window ("series" x window):

* ``fano_regression``: slope of ``var_count`` on ``mean_count`` across units through the origin,
  weighted by the sampling error of each variance (Churchland et al. 2010, Nat Neurosci
  13:369 weight the regression so; recalled from memory). For counts with Fano factor F,
  ``Var(var_count) ~ 2 (F m)^2 / (n_trials - 1)``, so the weights are ``(n_trials - 1) / m^2``
  and the slope is the ``(n_trials - 1)``-weighted mean of the units' ``var / mean``.
* ``fano_regression_unweighted``: the ordinary least-squares slope ``sum m v / sum m^2``, which
  lets the highest-rate units dominate.
* ``fano_mean_matched``: the weighted slope after mean matching (Churchland et al. 2010;
  procedure as recalled from memory): mean counts are binned (``n_bins`` equal bins over the
  cohort's observed range, one grid for everything); the greatest common distribution is the
  bin-wise minimum of the histograms over all windows and over every series that shares it
  (``match_across``: by default the whole cohort, so compared groups and conditions are
  matched to one distribution); at each window units are discarded at random within each bin
  down to that common count, and the slope is computed on the kept units. The matching is
  repeated ``n_repeats`` times and averaged.
* Intervals (``regression_ci_lo/hi``, ``ci_lo/hi``): ``n_boot`` resamples of whole subjects
  within each group (a subject's units stay together; every condition and alignment of a group
  uses the same draw), each of which redoes the whole estimate: binning counts, common
  distribution, ``n_repeats`` matchings averaged, slopes. The interval is the estimate plus or
  minus ``t_{G-1} sqrt(G / (G - 1))`` resampling SDs (:func:`few_cluster_interval`).
"""

from __future__ import annotations

import multiprocessing
import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

from spikevar.base.resampling import hierarchical_resample_indices
from spikevar.population.settings import MeanMatchSettings

COLUMNS = ["group", "condition", "alignment", "time_s", "window_s", "n_units", "mean_count",
           "fano_regression", "regression_ci_lo", "regression_ci_hi",
           "fano_regression_unweighted", "fano_mean_matched", "ci_lo", "ci_hi",
           "n_units_matched", "mean_count_matched", "population_reason"]


def slope_through_origin(mean: np.ndarray, var: np.ndarray, axis: int = -1) -> np.ndarray:
    """OLS slope of ``var`` on ``mean`` through the origin, along ``axis`` (NaN-aware)."""
    ok = np.isfinite(mean) & np.isfinite(var)
    m = np.where(ok, mean, 0.0)
    v = np.where(ok, var, 0.0)
    num = (m * v).sum(axis=axis)
    den = (m * m).sum(axis=axis)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / den, np.nan)


def _slope_terms(mean, var, n_trials):
    """The slope through the origin weighted by ``(n_trials - 1) / mean^2`` (see the module
    notes) as its terms: the weights ``n_trials - 1`` and weight x (var / mean), 0 where a
    unit is left out (zero mean count, fewer than two trials, undefined values)."""
    ok = np.isfinite(mean) & np.isfinite(var) & (mean > 0) & (n_trials > 1)
    w = np.where(ok, n_trials - 1.0, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.where(ok, var / np.where(ok, mean, 1.0), 0.0)
    return w, w * ratio


def _slope_of(w, w_ratio, *, axis: int = 0, keep=None):
    """The weighted slope from its terms, over the units in ``keep`` (all when None)."""
    if keep is not None:
        w, w_ratio = keep * w, keep * w_ratio  # the terms are finite: 0 where left out
    total = w.sum(axis=axis)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(total > 0, w_ratio.sum(axis=axis) / total, np.nan)


#: buckets per (window, bin) cell of the selection in :func:`mean_match_mask`: each unit's
#: uniform falls in one of this many equal slices of [0, 1), and only the units in the slice
#: that holds a cell's threshold are ordered one by one
SELECT_BUCKETS = 256


@dataclass
class MatchPlan:
    """What :func:`mean_match_mask` needs that does not change between matchings of one series
    (its bins, histograms and common distribution): worked out once, used by every repeat.
    Arrays are (units, windows), the layout of the uniforms drawn."""

    #: each unit's (window, bin) cell; unusable units are in an extra cell after the last,
    #: which keeps nothing
    cell: np.ndarray
    #: the first bucket of each unit's cell in the bucket counts
    first_bucket: np.ndarray
    #: (cells,): how many units each (window, bin) cell keeps (the common count of its bin)
    keep_count: np.ndarray

    @classmethod
    def of(cls, bins: np.ndarray, hist: np.ndarray, common: np.ndarray) -> MatchPlan:
        n_win, n_bins = hist.shape
        cell = np.where(bins >= 0, bins + n_bins * np.arange(n_win)[None, :], n_win * n_bins)
        return cls(cell=cell, first_bucket=cell * SELECT_BUCKETS,
                   keep_count=np.tile(np.asarray(common, dtype=np.int64), n_win))


def mean_match_mask(bins: np.ndarray, hist: np.ndarray, common: np.ndarray,
                    rng: np.random.Generator, plan: MatchPlan | None = None) -> np.ndarray:
    """Units kept at each window so that every window's histogram equals ``common``.

    ``bins``: (units, windows) bin index, -1 for unusable; ``hist``: (windows, bins) counts,
    each at least ``common``. Within each (window, bin) cell the kept units are a uniformly
    random subset: each unit draws U(0, 1), and the ``common[bin]`` units of the cell with the
    smallest U are kept. ``plan``: :meth:`MatchPlan.of` the same arguments, when the series is
    matched more than once.

    Each cell's threshold is found without sorting (a bucket selection): the units are counted
    by cell and by which of ``SELECT_BUCKETS`` equal slices of [0, 1) their U falls in; the
    slice where a cell's running count reaches its keep count holds the threshold, and only
    the units of those slices (about one in ``SELECT_BUCKETS``) are put in order.
    """
    n_units, n_win = bins.shape
    plan = MatchPlan.of(bins, hist, common) if plan is None else plan
    u = rng.random((n_units, n_win))
    n_cells = len(plan.keep_count)
    at = plan.first_bucket + (u * SELECT_BUCKETS).astype(np.intp)
    counts = np.bincount(at.ravel(), minlength=(n_cells + 1) * SELECT_BUCKETS)
    running = counts[:n_cells * SELECT_BUCKETS].reshape(n_cells, SELECT_BUCKETS).cumsum(axis=1)
    need = plan.keep_count
    # the slice holding each cell's need-th smallest U, and how many lie below it
    slice_of = (running < need[:, None]).sum(axis=1)
    below = np.where(slice_of > 0,
                     running[np.arange(n_cells), np.maximum(slice_of - 1, 0)], 0)
    # the units in each cell's threshold slice (none for cells that keep nothing)
    target = np.append(np.where(need > 0, slice_of + SELECT_BUCKETS * np.arange(n_cells), -1),
                       -1)
    in_slice = at == target[plan.cell]
    cand_cell, cand_u = plan.cell[in_slice], u[in_slice]
    order = np.lexsort((cand_u, cand_cell))
    cand_cell, cand_u = cand_cell[order], cand_u[order]
    threshold = np.full(n_cells + 1, -np.inf)  # the extra cell of unusable units keeps none
    chosen = np.flatnonzero(need > 0)
    if len(chosen):
        start = np.searchsorted(cand_cell, chosen)
        threshold[chosen] = cand_u[start + (need - below)[chosen] - 1]
    return u <= threshold[plan.cell]


def bin_edges(means: list[np.ndarray], n_bins: int) -> np.ndarray:
    """``n_bins`` equal bins over the observed finite mean counts of every series."""
    finite = np.concatenate([m[np.isfinite(m)] for m in means]) if means else np.zeros(0)
    if len(finite) == 0:
        return np.linspace(0.0, 1.0, n_bins + 1)
    lo, hi = finite.min(), finite.max()
    return np.linspace(lo, hi if hi > lo else lo + 1.0, n_bins + 1)


def bin_index(mean: np.ndarray, var: np.ndarray, edges: np.ndarray) -> np.ndarray:
    """Bin of each (unit, window) mean count; -1 where mean or variance is undefined."""
    finite = np.isfinite(mean) & np.isfinite(var)
    n_bins = len(edges) - 1
    bins = np.clip(np.searchsorted(edges, np.where(finite, mean, edges[0]), side="right") - 1,
                   0, n_bins - 1)
    return np.where(finite, bins, -1)


@dataclass
class Series:
    """One group x condition: (units x windows) matrices over the group's units."""

    group: str
    condition: str
    alignment: str
    mean: np.ndarray
    var: np.ndarray
    n_trials: np.ndarray


@dataclass
class SeriesTerms:
    """What the slopes use of a series, per unit and window: its mean-count bin
    (:func:`bin_index`) and the weighted slope's terms (:func:`_slope_terms`). A resample of
    units is these rows gathered: each row depends on its unit alone."""

    bins: np.ndarray
    w: np.ndarray
    w_ratio: np.ndarray

    @classmethod
    def of(cls, s: Series, edges: np.ndarray) -> SeriesTerms:
        return cls(bin_index(s.mean, s.var, edges), *_slope_terms(s.mean, s.var, s.n_trials))

    def rows(self, index: np.ndarray) -> SeriesTerms:
        return SeriesTerms(self.bins[index], self.w[index], self.w_ratio[index])


def estimate(series: list[Series], scopes: list[int], edges: np.ndarray, *, n_repeats: int,
             rng: np.random.Generator, details: bool = True,
             terms: list[SeriesTerms] | None = None) -> list[dict]:
    """Regression (weighted and not) and mean-matched slopes of every series, every window.

    ``details=False`` (the subject resamples, which use only ``regression`` and ``matched``)
    leaves out the unweighted slope and the kept units' mean count; the random numbers drawn
    and the slopes are the same either way. ``terms``: :meth:`SeriesTerms.of` each series,
    when known (then ``series`` is read only for the details)."""
    n_bins = len(edges) - 1
    terms = [SeriesTerms.of(s, edges) for s in series] if terms is None else terms
    hists = []
    for t in terms:
        n_win = t.bins.shape[1]
        usable = t.bins >= 0
        key = (t.bins + n_bins * np.arange(n_win)[None, :])[usable]
        hists.append(np.bincount(key, minlength=n_win * n_bins).reshape(n_win, n_bins))
    common = {}
    for scope, hist in zip(scopes, hists, strict=True):
        low = hist.min(axis=0)
        common[scope] = low if scope not in common else np.minimum(common[scope], low)
    out = []
    for k, (t, hist, scope) in enumerate(zip(terms, hists, scopes, strict=True)):
        slopes, kept_means = [], []
        plan = MatchPlan.of(t.bins, hist, common[scope])
        for _ in range(n_repeats):
            keep = mean_match_mask(t.bins, hist, common[scope], rng, plan)
            slopes.append(_slope_of(t.w, t.w_ratio, keep=keep))
            if details:
                kept_means.append(mean_of_kept(series[k].mean, keep))
        result = {"regression": _slope_of(t.w, t.w_ratio), "matched": np.mean(slopes, axis=0)}
        if details:
            result.update(unweighted=slope_through_origin(series[k].mean, series[k].var, axis=0),
                          kept_mean=np.mean(kept_means, axis=0),
                          kept=np.full(t.bins.shape[1], int(common[scope].sum())))
        out.append(result)
    return out


def mean_of_kept(mean: np.ndarray, keep: np.ndarray) -> np.ndarray:
    """Mean over the kept units of each window (NaN where none is kept): ``np.nanmean`` of
    the kept means, summed in the same order, without its copy and NaN mask. A kept unit's
    mean is finite (unusable units are never kept)."""
    with np.errstate(invalid="ignore", divide="ignore"):  # windows with none kept
        return np.where(keep, mean, 0.0).sum(axis=0) / keep.sum(axis=0)


def few_cluster_interval(estimate: np.ndarray, replicates: np.ndarray,
                         n_subjects: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """95% interval ``estimate +- t_{G-1} sqrt(G / (G - 1)) SD*`` from subject resamples.

    ``replicates``: (resamples, series, windows) from resampling whole subjects (the cluster
    bootstrap), ``n_subjects`` = G per series. The resampling SD underestimates the standard
    error by ``sqrt((G - 1) / G)`` and the normal quantile is too small with few subjects, so
    the interval uses the t quantile with G - 1 degrees of freedom (the few-cluster correction
    of Cameron & Miller 2015, J Hum Resour 50:317; recalled from memory). Measured coverage is
    in the README. With one subject no interval is given.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN windows stay NaN
        sd = np.nanstd(replicates, axis=0, ddof=1)
    g = n_subjects.astype(float)[:, None]
    from scipy.special import stdtrit  # Student t quantile (scipy.stats.t.ppf computes it)

    with np.errstate(invalid="ignore", divide="ignore"):
        half = stdtrit(np.maximum(g - 1, 1), 0.975) * np.sqrt(g / (g - 1)) * sd
    half = np.where(g > 1, half, np.nan)
    return estimate - half, estimate + half


def _series_of(tc: pd.DataFrame, times: np.ndarray):
    """Series matrices per group over that group's units, and each group's unit hierarchy."""
    series, groups = [], {}
    for group, part in tc.groupby("group", sort=True):
        units = part.drop_duplicates("unit_key")[["unit_key", "subject", "session"]]
        units = units.sort_values("unit_key").reset_index(drop=True)
        groups[group] = units
        for (condition, alignment), cond in part.groupby(["condition", "alignment"], sort=True):
            def matrix(column, cond=cond, units=units):
                return (cond.pivot_table(index="unit_key", columns="time_s", values=column,
                                         dropna=False)
                        .reindex(index=units["unit_key"], columns=times).to_numpy(float))
            series.append(Series(str(group), str(condition), str(alignment), matrix("mean_count"),
                                 matrix("var_count"), matrix("n_trials")))
    return series, groups


#: the resampling inputs, read by forked workers (inherited memory, not copied per task)
_RESAMPLING: dict = {}


def _uniforms_per_estimate(series: list[Series], draws: dict, b: int, n_repeats: int) -> int:
    """Random numbers :func:`estimate` draws for resample ``b``: one per unit and window in
    each matching (:func:`mean_match_mask`)."""
    return n_repeats * sum(len(draws[s.group][b]) * s.mean.shape[1] for s in series)


def _estimate_resamples(first: int, stop: int) -> tuple[np.ndarray, np.ndarray]:
    """Regression and mean-matched slopes of resamples ``first`` to ``stop - 1``, with the
    random stream advanced to where the one-process loop would stand at ``first``."""
    job = _RESAMPLING
    rng = job.get("rng")
    if rng is None:
        bit_generator = np.random.PCG64()
        bit_generator.state = job["state"]
        bit_generator.advance(int(job["offsets"][first]))
        rng = np.random.Generator(bit_generator)
    series, draws = job["series"], job["draws"]
    n_win = series[0].mean.shape[1] if series else 0
    reg = np.full((stop - first, len(series), n_win), np.nan)
    matched = np.full_like(reg, np.nan)
    terms = job["terms"]
    for b in range(first, stop):
        resampled = [t.rows(draws[s.group][b]) for s, t in zip(series, terms, strict=True)]
        for k, result in enumerate(estimate(series, job["scopes"], job["edges"],
                                            n_repeats=job["n_repeats"], rng=rng,
                                            details=False, terms=resampled)):
            reg[b - first, k] = result["regression"]
            matched[b - first, k] = result["matched"]
    return reg, matched


def _estimate_resamples_task(task: tuple[int, int]) -> tuple[np.ndarray, np.ndarray]:
    return _estimate_resamples(*task)


def _resample_estimates(series, terms: list[SeriesTerms], scopes, edges, draws, *, n_boot: int,
                        n_repeats: int, rng: np.random.Generator,
                        workers: int = 1) -> dict[str, np.ndarray]:
    """(resamples, series, windows) slopes of every subject resample, over ``workers`` forked
    processes. ``terms``: :meth:`SeriesTerms.of` each series (what the resamples gather).

    Each resample's matchings use the random numbers the one-process loop would give it: the
    count each resample draws is known in advance, so a worker starts its share by advancing
    a copy of the generator (PCG64's ``advance``, one 64-bit output per uniform double) to
    where the loop would stand. The table is the same for any number of workers, to the bit.
    """
    n_win = series[0].mean.shape[1] if series else 0
    boot = {k: np.full((max(n_boot, 2), len(series), n_win), np.nan)
            for k in ("regression", "matched")}
    if n_boot == 0:
        return boot
    counts = [_uniforms_per_estimate(series, draws, b, n_repeats) for b in range(n_boot)]
    exact = isinstance(rng.bit_generator, np.random.PCG64)
    _RESAMPLING.update(series=series, terms=terms,
                       scopes=scopes, edges=edges, draws=draws,
                       n_repeats=n_repeats, offsets=np.concatenate([[0], np.cumsum(counts)]),
                       state=rng.bit_generator.state, rng=None if exact else rng)
    try:
        if workers > 1 and n_boot > 1 and exact:
            n_tasks = min(n_boot, 4 * workers)
            cuts = np.linspace(0, n_boot, n_tasks + 1).round().astype(int)
            tasks = [(int(a), int(b)) for a, b in zip(cuts[:-1], cuts[1:], strict=True) if b > a]
            with multiprocessing.get_context("fork").Pool(min(workers, len(tasks))) as pool:
                parts = pool.map(_estimate_resamples_task, tasks, chunksize=1)
        else:
            parts = [_estimate_resamples(0, n_boot)]
    finally:
        _RESAMPLING.clear()
    boot["regression"][:n_boot] = np.concatenate([p[0] for p in parts])
    boot["matched"][:n_boot] = np.concatenate([p[1] for p in parts])
    return boot


def population_fano_table(timecourse: pd.DataFrame, *, settings: MeanMatchSettings,
                          seed: int, workers: int = 1) -> pd.DataFrame:
    """One row per group x condition x window (see the module docstring).

    Notes
    -----
    ``n_units_matched`` is the size of the common distribution (the same in every window of a
    series, by construction) and ``mean_count_matched`` the mean count of the kept units
    (averaged over the matchings). Fewer than ``min_units`` kept units give no mean-matched
    value, with the reason. A unit is identified by (session, unit). Units with NaN mean or
    variance in a window (no trials, single trial) are left out of that window. Fewer than
    ``min_units`` usable units give NaN values with ``population_reason``; a condition present
    in some sessions only uses the units that have it (``n_units`` says how many).
    ``workers``: processes sharing the resamples; the table is the same for any number
    (:func:`_resample_estimates`).
    """
    if len(timecourse) == 0:
        return pd.DataFrame({c: pd.Series(dtype=float if c not in ("group", "condition",
                                                                    "alignment",
                                                                    "population_reason")
                                          else object) for c in COLUMNS})
    rng = np.random.default_rng(seed)
    # without a subject column each session counts as its own subject
    subject = timecourse["subject"] if "subject" in timecourse else timecourse["session"]
    tc = timecourse.assign(unit_key=timecourse["session"].astype(str) + "/" +
                           timecourse["unit"].astype(str),
                           group=timecourse["group"].astype(str), subject=subject.astype(str))
    if "n_trials" not in tc:
        tc["n_trials"] = 2.0  # equal weights when the trial counts are not known
    if "alignment" not in tc:
        tc["alignment"] = "event"
    times = np.sort(tc["time_s"].unique())
    series, groups = _series_of(tc, times)
    scope_names = {"cohort": lambda s: "", "group": lambda s: s.group,
                   "series": lambda s: (s.group, s.condition, s.alignment)}[settings.match_across]
    keys = [scope_names(s) for s in series]
    scopes = [keys.index(k) for k in keys]
    edges = bin_edges([s.mean for s in series], settings.n_bins)
    terms = [SeriesTerms.of(s, edges) for s in series]  # the point estimate's and resamples'
    point = estimate(series, scopes, edges, n_repeats=settings.n_repeats, rng=rng, terms=terms)

    # hierarchical resamples: one draw of units per group, shared by its conditions; none
    # when no group has two subjects (no interval is given from one subject)
    n_subjects = np.array([groups[s.group]["subject"].nunique() for s in series])
    n_boot = settings.n_boot if (n_subjects >= 2).any() else 0
    draws = {}
    for group, units in groups.items():
        if n_boot == 0:
            continue
        rows, rep = hierarchical_resample_indices(units["subject"], units["session"],
                                                  n_boot=n_boot, rng=rng,
                                                  levels=("subject",))
        cuts = np.searchsorted(rep, np.arange(1, n_boot))
        draws[group] = np.split(rows, cuts)
    boot = _resample_estimates(series, terms, scopes, edges, draws, n_boot=n_boot,
                               n_repeats=settings.n_repeats, rng=rng, workers=workers)
    reg = np.stack([r["regression"] for r in point])
    matched = np.stack([r["matched"] for r in point])
    reg_lo, reg_hi = few_cluster_interval(reg, boot["regression"], n_subjects)
    mm_lo, mm_hi = few_cluster_interval(matched, boot["matched"], n_subjects)

    widths = tc.groupby("time_s")["window_s"].first().reindex(times).to_numpy(float)
    frames = []
    for k, (s, result) in enumerate(zip(series, point, strict=True)):
        usable = (np.isfinite(s.mean) & np.isfinite(s.var)).sum(axis=0)
        enough = usable >= settings.min_units
        kept = result["kept"]
        no_common = enough & ~(kept > 0)
        too_few_kept = enough & (kept > 0) & (kept < settings.min_units)
        reason = np.where(enough, "", f"fewer than {settings.min_units} units")
        reason = np.where(no_common, "no common mean-count distribution across windows", reason)
        reason = np.where(too_few_kept, f"mean matching kept fewer than {settings.min_units} "
                          "units", reason)
        if n_subjects[k] < 2:
            reason = np.where(reason == "", "single subject: no interval", reason)
        matched_ok = enough & (kept >= settings.min_units)

        def nan_unless(x, ok):
            return np.where(ok, x, np.nan)

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            mean_count = np.nanmean(s.mean, axis=0)
        frames.append(pd.DataFrame({
            "group": s.group, "condition": s.condition, "alignment": s.alignment,
            "time_s": times, "window_s": widths,
            "n_units": usable.astype(np.int64), "mean_count": mean_count,
            "fano_regression": nan_unless(result["regression"], enough),
            "regression_ci_lo": nan_unless(reg_lo[k], enough),
            "regression_ci_hi": nan_unless(reg_hi[k], enough),
            "fano_regression_unweighted": nan_unless(result["unweighted"], enough),
            "fano_mean_matched": nan_unless(result["matched"], matched_ok),
            "ci_lo": nan_unless(mm_lo[k], matched_ok), "ci_hi": nan_unless(mm_hi[k], matched_ok),
            "n_units_matched": kept.astype(np.int64),
            "mean_count_matched": nan_unless(result["kept_mean"], matched_ok),
            "population_reason": reason}))
    table = pd.concat(frames, ignore_index=True)[COLUMNS]
    # a condition absent from a group's sessions has no rows there
    return table[table["n_units"] > 0].reset_index(drop=True) if len(table) else table
