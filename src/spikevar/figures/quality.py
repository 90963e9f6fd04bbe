"""Cohort figures of unit quality: violations, contamination, which units the statistics left
out (by inclusion rule and group) and which units have no metrics or fits (in a user's words),
and each unit's rate across the session with the units whose rate drifts marked."""

from __future__ import annotations

import textwrap

import numpy as np
import pandas as pd

from spikevar.figures import style as figure_style

#: the inclusion rules (config inclusion) in a reader's words
RULE_WORDS = {
    "min_spikes": "too few spikes",
    "min_rate_hz": "rate too low",
    "max_violation_fraction": "too many refractory violations",
    "max_contamination": "contamination too high",
    "labels": "label not accepted",
    "min_trials_per_condition": "too few trials while recorded",
    "require_stable": "rate drifts over the session",
}
#: at most this many units per group are drawn in the stability panels
MAX_UNITS_DRAWN = 150
LABEL_WIDTH = 28


def _colours(names):
    return {g: figure_style.SERIES[i % len(figure_style.SERIES)] for i, g in enumerate(names)}


def _empty(ax, text: str) -> None:
    ax.text(0.5, 0.5, text, ha="center", va="center", transform=ax.transAxes, fontsize=8,
            color=figure_style.INK, wrap=True)
    ax.set_xticks([])
    ax.set_yticks([])


def missing_reason_words(units: pd.DataFrame, recovery: pd.DataFrame) -> pd.Series:
    """One entry per unit without ISI metrics or without a recovery fit, in a user's words."""
    isi = units.loc[units["isi_reason"].fillna("") != "", "isi_reason"].map(
        lambda r: f"no ISI metrics: {r}")
    failed = recovery[(recovery["model"] == "exp_recovery")
                      & ~recovery["converged"].astype(bool)] if len(recovery) else recovery

    def words(note: str) -> str:
        note = str(note)
        if note.startswith("optimiser"):
            return "recovery fit did not converge"
        if note.startswith("too few intervals"):
            return "too few intervals for a recovery fit"
        if note.startswith("zero-length interval"):
            return "duplicate spike times: no recovery fit"
        return "no recovery fit: " + note.split(":")[0][:40]

    fits = failed["fit_note"].map(words) if len(failed) else pd.Series(dtype=str)
    return pd.concat([isi, fits], ignore_index=True)


def exclusion_counts(selection: pd.DataFrame) -> pd.DataFrame:
    """Units left out per inclusion rule (rows, in words) and group (columns); a unit failing
    two rules counts under both."""
    if not len(selection) or "excluded_by" not in selection.columns:
        return pd.DataFrame()
    rows = selection.loc[selection["excluded_by"].fillna("") != "", ["group", "excluded_by"]]
    if rows.empty:
        return pd.DataFrame()
    rows = rows.assign(rule=rows["excluded_by"].str.split(";")).explode("rule")
    counts = rows.groupby(["rule", "group"]).size().unstack(fill_value=0)
    counts.index = [RULE_WORDS.get(r, r) for r in counts.index]
    return counts


def quality_figure(units: pd.DataFrame, recovery: pd.DataFrame, selection: pd.DataFrame,
                   path) -> None:
    """Four panels: violations, contamination, units left out of the statistics by rule and
    group, units without metrics or fits by reason."""
    import matplotlib.pyplot as plt

    fig, axes = plt.subplots(2, 2, figsize=(11, 7.2))
    ax = axes[0, 0]
    ax.hist(units["refractory_violation_fraction"].dropna() * 100, bins=30,
            color=figure_style.SERIES[0], edgecolor="white")
    ax.set_xlabel("ISIs shorter than the refractory threshold (%)")
    ax.set_ylabel("units")
    ax.set_title("Refractory-period violations", loc="left")
    ax = axes[0, 1]
    ax.hist(units["contamination_hill"].dropna() * 100, bins=30, color=figure_style.SERIES[1],
            edgecolor="white")
    n_flag = int((units["contamination_flag"].fillna("") != "").sum())
    ax.set_xlabel("estimated contamination (%, Hill et al. 2011)")
    ax.set_ylabel("units")
    ax.set_title(f"Contamination ({n_flag} units not estimable)", loc="left")

    ax = axes[1, 0]
    counts = exclusion_counts(selection)
    n_out = int((~selection["included"].astype(bool)).sum()) if len(selection) else 0
    if counts.empty:
        _empty(ax, f"all {len(units)} units are included\n(no inclusion rule left one out)")
    else:
        groups = list(counts.columns)
        colours = _colours(groups)
        height = 0.8 / len(groups)
        y = np.arange(len(counts))
        for k, g in enumerate(groups):
            ax.barh(y + k * height, counts[g].to_numpy(), height=height, color=colours[g],
                    label=g, hatch=["", "//", "..", "xx"][k % 4], edgecolor="white")
        ax.set_yticks(y + height * (len(groups) - 1) / 2,
                      [textwrap.fill(r, LABEL_WIDTH) for r in counts.index])
        ax.invert_yaxis()
        ax.legend(fontsize=7, title="group", title_fontsize=7)
        ax.set_xlabel("units left out")
    ax.set_title(f"Left out of the statistics: {n_out} of {len(units)} units", loc="left")

    ax = axes[1, 1]
    reasons = missing_reason_words(units, recovery).value_counts()
    if reasons.empty:
        _empty(ax, f"all {len(units)} units have ISI metrics and a recovery fit")
    else:
        ax.barh([textwrap.fill(r, LABEL_WIDTH) for r in reasons.index], reasons.to_numpy(),
                color="#6b7a8f")
        ax.invert_yaxis()
        ax.set_xlabel("units")
    ax.set_title("Without metrics or fits, by reason", loc="left")
    figure_style.save_titled(fig, path, f"Quality overview: {len(units)} units")


def stability_figure(blocks: pd.DataFrame, units: pd.DataFrame, path, *,
                     seed: int = 0) -> None:
    """Each unit's rate across the session relative to its mean (a column per group; units
    whose rate drifts in colour, the others grey), and the share of drifting units per
    session."""
    import matplotlib.pyplot as plt

    groups = sorted(units["group"].astype(str).unique()) if len(units) else ["(none)"]
    colours = _colours(groups)
    fig, axes = plt.subplots(1, len(groups) + 1, squeeze=False,
                             figsize=(1.0 + 3.8 * (len(groups) + 1), 3.8))
    axes = axes[0]
    stable = units.set_index(["session", "unit"])["stable"].astype(bool) if len(units) else \
        pd.Series(dtype=bool)
    rng = np.random.default_rng(seed)
    for j, group in enumerate(groups):
        ax = axes[j]
        part = blocks[blocks["group"].astype(str) == group] if len(blocks) else blocks
        keys = part[["session", "unit"]].drop_duplicates() if len(part) else part
        if not len(keys):
            _empty(ax, "no unit blocks")
            continue
        shown = keys.iloc[np.sort(rng.choice(len(keys), size=min(MAX_UNITS_DRAWN, len(keys)),
                                             replace=False))]
        n_drift = 0
        for session, unit in shown.itertuples(index=False):
            rows = part[(part["session"] == session) & (part["unit"] == unit)]
            mean = rows["rate_hz"].mean()
            if not mean > 0:
                continue
            ok = bool(stable.get((session, unit), True))
            n_drift += not ok
            ax.plot(rows["block_start_s"] / 60.0, rows["rate_hz"] / mean,
                    color="#b9c1ca" if ok else colours[group], lw=0.7 if ok else 1.2,
                    alpha=0.7 if ok else 0.95, zorder=1 if ok else 2)
        ax.axhline(1.0, color=figure_style.INK, lw=0.8, ls=":")
        ax.set_xlabel("time in the session (min)")
        if j == 0:
            ax.set_ylabel("block rate / unit's mean rate")
        ax.set_title(f"{group}: {n_drift} of {len(shown)} drawn drift", loc="left")
    ax = axes[-1]
    if len(units):
        share = units.groupby(["group", "session"])["stable"].apply(
            lambda s: 100.0 * (~s.astype(bool)).mean()).reset_index(name="pct")
        for k, g in enumerate(groups):
            values = share.loc[share["group"].astype(str) == g, "pct"].to_numpy()
            x = k + rng.uniform(-0.12, 0.12, size=len(values))
            ax.scatter(x, values, color=colours[g], marker=figure_style.MARKERS[k % 5], s=22)
        ax.set_xticks(range(len(groups)), groups)
        ax.set_xlim(-0.6, len(groups) - 0.4)
    ax.set_ylabel("units whose rate drifts (%)")
    ax.set_title("Per session", loc="left")
    figure_style.save_titled(
        fig, path, "Stability over the session (rate per block; coloured: rate-drift test "
        "rejects one stationary rate)")
