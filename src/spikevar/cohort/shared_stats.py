"""Group statistics of shared variability, each session summarised first and then combined.

Noise correlations, percent shared and dimensionality are properties of a session's population,
so the unit of replication is the session (nested in its subject), never the unit pair. Every
table here is built from per-session numbers: ``population_structure`` and
``shared_timecourse`` already hold one row per session and condition, and the pair table is
reduced per session (one dataset part at a time) before anything is combined, so no job holds
every pair of the cohort in memory.

Intervals resample subjects, then sessions within each drawn subject (the hierarchical
bootstrap of :mod:`spikevar.cohort.bootstrap`, with one row per session), and every column of a
time course is resampled with the same draws.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.base.parquet_io import read_parquet_checked
from spikevar.base.resampling import hierarchical_resample_indices
from spikevar.cohort.group_stats import group_summary

#: population statistics per session (population_structure) summarised by group
SESSION_METRICS = {
    "mean_r_sc": "mean noise correlation r_sc of the session's pairs",
    "percent_shared": "percent of count variance shared (session mean over units)",
    "dim_shared": "shared dimensionality (dimensions for 95% of shared variance)",
}
UNIT_METRICS = {"gain_variance": "gain variance sigma2_G of the modulated Poisson model"}
#: edges (Hz) of the geometric-mean-rate bins of r_sc_by_rate (octaves; the last is open)
RATE_EDGES_HZ = (0.0, 1.0, 2.0, 4.0, 8.0, 16.0, 32.0, 64.0, np.inf)
META = ("session", "subject", "group")


def shared_group_summary(structure: pd.DataFrame, gain: pd.DataFrame, *, n_boot: int,
                         rng: np.random.Generator) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Group summaries and differences of the shared metrics per alignment x condition x epoch.

    Session metrics come from ``population_structure`` (one row per session; a session whose
    factor analysis was not possible gives no percent shared or dimensionality); the gain
    variance is a unit metric (epoch empty: it is fitted across the time-course windows).
    """
    summaries, differences = [], []
    keys = ["alignment", "condition", "epoch"]
    if len(structure):
        frame = structure.assign(unit=structure["session"],
                                 percent_shared=structure["percent_shared_mean"],
                                 dim_shared=structure["dim_shared"].astype(float))
        no_fit = frame["structure_reason"].astype(str) != ""
        frame.loc[no_fit, ["percent_shared", "dim_shared"]] = np.nan
        for values, part in frame.groupby(keys, sort=True):
            s, d = group_summary(part, n_boot=n_boot, metrics=SESSION_METRICS, rng=rng)
            summaries.append(s.assign(**dict(zip(keys, values, strict=True))))
            differences.append(d.assign(**dict(zip(keys, values, strict=True))))
    if len(gain):
        for values, part in gain.groupby(keys[:2], sort=True):
            s, d = group_summary(part, n_boot=n_boot, metrics=UNIT_METRICS, rng=rng)
            stratum = dict(zip(keys[:2], values, strict=True), epoch="")
            summaries.append(s.assign(**stratum))
            differences.append(d.assign(**stratum))
    if not summaries:
        return pd.DataFrame(), pd.DataFrame()
    return pd.concat(summaries, ignore_index=True), pd.concat(differences, ignore_index=True)


def session_bootstrap_means(values: np.ndarray, subject, session, *, n_boot: int,
                            rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray,
                                                               np.ndarray, np.ndarray]:
    """Mean over sessions of each column of ``values`` (sessions x columns, NaN = missing) with
    its 95% hierarchical-bootstrap interval; one set of draws serves every column.

    Returns mean, ci_lo, ci_hi and the number of sessions with a value, per column.
    """
    values = np.asarray(values, float)
    n, n_col = values.shape
    finite = np.isfinite(values)
    filled = np.where(finite, values, 0.0)
    n_sessions = finite.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = filled.sum(axis=0) / n_sessions
    rows, rep = hierarchical_resample_indices(subject, session, n_boot=n_boot, rng=rng)
    draws = np.bincount(rep * n + rows, minlength=n_boot * n).reshape(n_boot, n).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        boot = (draws @ filled) / (draws @ finite)
    lo = np.full(n_col, np.nan)
    hi = np.full(n_col, np.nan)
    ok = n_sessions > 0
    if ok.any():
        part = boot[:, ok]
        lo[ok] = np.nanpercentile(np.where(np.isfinite(part), part, np.nan), 2.5, axis=0)
        hi[ok] = np.nanpercentile(np.where(np.isfinite(part), part, np.nan), 97.5, axis=0)
    mean[~ok] = np.nan
    return mean, lo, hi, n_sessions


def _combine_by_group(per_session: pd.DataFrame, *, keys: list[str], column: str,
                      value_columns: list[str], n_boot: int,
                      rng: np.random.Generator) -> pd.DataFrame:
    """Mean over sessions with interval per group x keys x ``column``, for each value column."""
    out = []
    # first-appearance order keeps the alignments in the config's order
    for values, part in per_session.groupby(["group", *keys], sort=False):
        wide = {v: part.pivot_table(index=list(META), columns=column, values=v,
                                    aggfunc="first", dropna=False) for v in value_columns}
        index = wide[value_columns[0]].index
        subject = index.get_level_values("subject").to_numpy()
        session = index.get_level_values("session").to_numpy()
        row = pd.DataFrame({column: wide[value_columns[0]].columns.to_numpy()})
        stratum = dict(zip(("group", *keys), values, strict=True))
        for v in value_columns:
            mean, lo, hi, n = session_bootstrap_means(wide[v].reindex(index).to_numpy(float),
                                                      subject, session, n_boot=n_boot, rng=rng)
            row[v] = mean
            row[f"{v}_ci_lo"] = lo
            row[f"{v}_ci_hi"] = hi
            row[f"n_sessions_{v}"] = n.astype(np.int64)
        row["n_subjects"] = int(len(np.unique(subject)))
        out.append(row.assign(**stratum))
    if not out:
        return pd.DataFrame()
    frame = pd.concat(out, ignore_index=True).sort_values("group", kind="stable",
                                                          ignore_index=True)
    lead = ["group", *keys, column]
    return frame[lead + [c for c in frame.columns if c not in lead]]


def shared_over_time(timecourse_parts: list, *, n_boot: int,
                     rng: np.random.Generator) -> pd.DataFrame:
    """Group x alignment x condition x time: mean over sessions of the session's mean r_sc and
    mean percent shared, with 95% intervals (subjects, then sessions, resampled)."""
    columns = [*META, "alignment", "condition", "time_s", "window_s", "mean_r_sc",
               "percent_shared_mean"]
    frames = [read_parquet_checked(p).to_pandas()[columns] for p in timecourse_parts]
    frames = [f for f in frames if len(f)]
    if not frames:
        return pd.DataFrame(columns=["group", "alignment", "condition", "time_s"])
    per_session = pd.concat(frames, ignore_index=True)
    table = _combine_by_group(per_session, keys=["alignment", "condition"], column="time_s",
                              value_columns=["mean_r_sc", "percent_shared_mean"],
                              n_boot=n_boot, rng=rng)
    width = per_session.groupby("time_s")["window_s"].first()
    table.insert(4, "window_s", table["time_s"].map(width).to_numpy(float))
    return table


def session_rate_bins(pairs: pd.DataFrame) -> pd.DataFrame:
    """One session's pairs reduced to mean r_sc per geometric-mean-rate bin (per alignment x
    condition x epoch): the per-session step of r_sc_by_rate."""
    keys = [*META, "alignment", "condition", "epoch"]
    pairs = pairs[np.isfinite(pairs["r_sc"].to_numpy(float))]
    if pairs.empty:
        return pd.DataFrame(columns=[*keys, "rate_bin", "n_pairs", "r_sc"])
    edges = np.asarray(RATE_EDGES_HZ)
    index = np.clip(np.searchsorted(edges, pairs["geo_mean_rate_hz"].to_numpy(float),
                                    side="right") - 1, 0, len(edges) - 2)
    binned = pairs.assign(rate_bin=index)
    out = binned.groupby([*keys, "rate_bin"], sort=True).agg(
        n_pairs=("r_sc", "size"), r_sc=("r_sc", "mean")).reset_index()
    return out


def r_sc_by_rate(pair_parts: list, *, n_boot: int, rng: np.random.Generator) -> pd.DataFrame:
    """Group x alignment x condition x epoch x rate bin: mean over sessions of each session's
    mean r_sc in the bin, with 95% intervals; each dataset part is read and reduced alone."""
    columns = [*META, "alignment", "condition", "epoch", "r_sc", "geo_mean_rate_hz"]
    per_session = [session_rate_bins(read_parquet_checked(p, columns=columns).to_pandas())
                   for p in pair_parts]
    per_session = [f for f in per_session if len(f)]
    if not per_session:
        return pd.DataFrame(columns=["group", "alignment", "condition", "epoch", "rate_lo_hz",
                                     "rate_hi_hz", "r_sc"])
    frame = pd.concat(per_session, ignore_index=True)
    keys = ["group", "alignment", "condition", "epoch", "rate_bin"]
    pairs = frame.groupby(keys, as_index=False)["n_pairs"].sum()
    table = _combine_by_group(frame, keys=["alignment", "condition", "epoch"],
                              column="rate_bin", value_columns=["r_sc"], n_boot=n_boot,
                              rng=rng)
    edges = np.asarray(RATE_EDGES_HZ)
    bins = table["rate_bin"].to_numpy(int)
    table.insert(5, "rate_lo_hz", edges[bins])
    table.insert(6, "rate_hi_hz", edges[bins + 1])
    table = table.merge(pairs, on=keys, how="left")
    table["n_pairs"] = table["n_pairs"].fillna(0).astype(np.int64)
    return table.drop(columns="rate_bin")
