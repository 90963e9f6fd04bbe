"""Figures of shared variability (cohort): r_sc against rate, shared variability around the
event, and each session's dimensionality and percent shared, by group."""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.figures import style as figure_style


def _colours(names):
    return {g: figure_style.SERIES[i % len(figure_style.SERIES)] for i, g in enumerate(names)}


def _empty(ax, text: str) -> None:
    ax.text(0.5, 0.5, text, ha="center", va="center", transform=ax.transAxes,
            color=figure_style.INK, fontsize=8)


def _first(frame: pd.DataFrame, column: str) -> list:
    """Distinct values: alignments in table order (the config's order), others sorted."""
    if not len(frame):
        return []
    values = frame[column].astype(str)
    return list(pd.unique(values)) if column == "alignment" else sorted(values.unique())


def _rate_axis(ax) -> None:
    from matplotlib.ticker import FixedLocator, NullFormatter, ScalarFormatter

    ax.set_xscale("log")
    ax.xaxis.set_major_locator(FixedLocator([0.5, 1, 2, 5, 10, 20, 50, 100]))
    ax.xaxis.set_major_formatter(ScalarFormatter())
    ax.xaxis.set_minor_formatter(NullFormatter())


def r_sc_rate_figure(by_rate: pd.DataFrame, path) -> None:
    """Mean r_sc per geometric-mean-rate bin: a panel per alignment x epoch, a line per group
    and condition (marker and line style per condition)."""
    import matplotlib.pyplot as plt

    alignments = _first(by_rate, "alignment") or ["(none)"]
    epochs = _first(by_rate, "epoch") or ["(none)"]
    groups = _first(by_rate, "group")
    conditions = _first(by_rate, "condition")
    colours = _colours(groups)
    fig, axes = plt.subplots(len(alignments), len(epochs), squeeze=False,
                             figsize=(0.6 + 3.9 * len(epochs), 0.5 + 2.9 * len(alignments)),
                             sharey=True, sharex=True)
    styles = ["-", "--", ":", "-."]
    for i, alignment in enumerate(alignments):
        for j, epoch in enumerate(epochs):
            ax = axes[i, j]
            part = by_rate[(by_rate["alignment"].astype(str) == alignment)
                           & (by_rate["epoch"].astype(str) == epoch)] if len(by_rate) else by_rate
            if part.empty:
                _empty(ax, "no pairs with a correlation")
            for g in groups:
                for k, c in enumerate(conditions):
                    s = part[(part["group"] == g) & (part["condition"] == c)]
                    s = s[np.isfinite(s["r_sc"].to_numpy(float))]
                    if s.empty:
                        continue
                    lo = s["rate_lo_hz"].to_numpy(float)
                    hi = np.where(np.isfinite(s["rate_hi_hz"]), s["rate_hi_hz"], 2 * lo)
                    x = np.sqrt(np.maximum(lo, 0.5) * hi)
                    ax.fill_between(x, s["r_sc_ci_lo"], s["r_sc_ci_hi"], color=colours[g],
                                    alpha=0.14, linewidth=0)
                    ax.plot(x, s["r_sc"], color=colours[g], ls=styles[k % len(styles)],
                            marker=figure_style.MARKERS[k % len(figure_style.MARKERS)], ms=4,
                            lw=1.5, label=f"{g} / {c}")
            ax.axhline(0.0, color=figure_style.REFERENCE, lw=0.8)
            _rate_axis(ax)
            ax.set_title(f"{epoch} epoch, aligned on {alignment}", loc="left")
            if i == len(alignments) - 1:  # the rows share the rate axis
                ax.set_xlabel("geometric mean rate of the pair (Hz)")
            if j == 0:
                ax.set_ylabel("mean noise correlation r_sc")
    handles, labels = axes[0, 0].get_legend_handles_labels()
    for ax in axes.ravel():
        if not handles:
            handles, labels = ax.get_legend_handles_labels()
    if handles:
        axes[0, -1].legend(handles, labels, fontsize=7, title="group / condition",
                           title_fontsize=7)
    figure_style.save_titled(
        fig, path,
        "Noise correlation against firing rate (each session's pairs averaged per "
        "rate bin, then sessions; bands: 95% interval, animals resampled)")


def shared_time_figure(over_time: pd.DataFrame, path) -> None:
    """Mean r_sc and percent shared over event-aligned time: a column per group, two rows per
    alignment, a line per condition."""
    import matplotlib.pyplot as plt

    groups = _first(over_time, "group") or ["(none)"]
    alignments = _first(over_time, "alignment") or ["(none)"]
    conditions = _first(over_time, "condition")
    colours = _colours(conditions)
    rows = [(a, m) for a in alignments for m in ("mean_r_sc", "percent_shared_mean")]
    # one scale per row, so the groups compare at a glance
    fig, axes = plt.subplots(len(rows), len(groups), squeeze=False, sharex=True, sharey="row",
                             figsize=(0.6 + 4.8 * len(groups), 0.5 + 2.3 * len(rows)))
    label = {"mean_r_sc": "mean r_sc", "percent_shared_mean": "% variance shared"}
    for r, (alignment, metric) in enumerate(rows):
        for j, group in enumerate(groups):
            ax = axes[r, j]
            drawn = False
            for k, c in enumerate(conditions):
                s = over_time[(over_time["group"] == group) & (over_time["condition"] == c)
                              & (over_time["alignment"] == alignment)].sort_values("time_s")
                if s.empty or not np.isfinite(s[metric].to_numpy(float)).any():
                    continue
                drawn = True
                ax.fill_between(s["time_s"], s[f"{metric}_ci_lo"], s[f"{metric}_ci_hi"],
                                color=colours[c], alpha=0.16, linewidth=0)
                ax.plot(s["time_s"], s[metric], color=colours[c], lw=1.6,
                        marker=figure_style.MARKERS[k % len(figure_style.MARKERS)],
                        markevery=6, ms=4, label=c)
            if not drawn:
                _empty(ax, "no value (too few trials or units)")
            ax.axvline(0.0, color=figure_style.INK, lw=0.9, ls=":")
            ax.set_title(f"group {group}: {label[metric]}, aligned on {alignment}", loc="left")
            if j == 0:
                ax.set_ylabel(label[metric])
            if r == 0 and j == len(groups) - 1 and drawn:
                ax.legend(fontsize=7, title="condition", title_fontsize=7)
    for j in range(len(groups)):
        axes[-1, j].set_xlabel("time from the alignment event (s; window centre)")
    figure_style.save_titled(
        fig, path,
        "Shared variability around the event (session means, then sessions averaged; "
        "bands: 95% interval, animals resampled; dotted line: the event)")


def shared_structure_figure(structure: pd.DataFrame, path) -> None:
    """Each session's shared dimensionality and mean percent shared, by group: a column per
    epoch, sessions as points (one marker per condition), the group median as a bar."""
    import matplotlib.pyplot as plt

    alignments = _first(structure, "alignment")
    first = alignments[0] if alignments else None
    part = structure[structure["alignment"].astype(str) == first] if first else structure
    part = part[part["structure_reason"].astype(str) == ""] if len(part) else part
    epochs = _first(part, "epoch") or ["(none)"]
    groups = _first(part, "group")
    conditions = _first(part, "condition")
    colours = _colours(groups)
    metrics = (("dim_shared", "shared dimensionality"),
               ("percent_shared_mean", "% variance shared (mean over units)"))
    fig, axes = plt.subplots(len(metrics), len(epochs), squeeze=False,
                             figsize=(0.6 + 3.6 * len(epochs), 5.6), sharey="row")
    rng = np.random.default_rng(0)  # jitter only
    for j, epoch in enumerate(epochs):
        for r, (metric, label) in enumerate(metrics):
            ax = axes[r, j]
            e = part[part["epoch"].astype(str) == epoch] if len(part) else part
            if e.empty:
                _empty(ax, "no session with a factor analysis")
            for i, g in enumerate(groups):
                for k, c in enumerate(conditions):
                    s = e[(e["group"] == g) & (e["condition"] == c)]
                    if s.empty:
                        continue
                    x = i + (k - (len(conditions) - 1) / 2) * 0.18 + rng.uniform(-0.04, 0.04,
                                                                                 len(s))
                    ax.scatter(x, s[metric], color=colours[g], s=16, alpha=0.8, clip_on=False,
                               marker=figure_style.MARKERS[k % len(figure_style.MARKERS)],
                               label=c if i == 0 else None, edgecolor="white", linewidth=0.4)
                values = e.loc[e["group"] == g, metric].to_numpy(float)
                if np.isfinite(values).any():
                    ax.hlines(np.nanmedian(values), i - 0.32, i + 0.32, color=figure_style.INK,
                              lw=1.6)
            ax.set_xticks(range(len(groups)), groups)
            ax.set_xlim(-0.6, max(len(groups), 1) - 0.4)
            if metric == "dim_shared":
                ax.yaxis.get_major_locator().set_params(integer=True)
            ax.set_ylim(bottom=min(0.0, ax.get_ylim()[0]))
            ax.set_title(f"{epoch} epoch" if r == 0 else "", loc="left")
            if j == 0:
                ax.set_ylabel(label)
            if r == len(metrics) - 1:
                ax.set_xlabel("group")
    handles, labels = axes[0, 0].get_legend_handles_labels()
    if handles:
        # markers in the ink colour: the legend names the condition, the colour is the group's
        grey = [plt.Line2D([], [], ls="none", color=figure_style.INK, ms=4,
                           marker=figure_style.MARKERS[k % len(figure_style.MARKERS)])
                for k in range(len(handles))]
        axes[0, -1].legend(grey, labels, fontsize=7, title="condition (marker)",
                           title_fontsize=7)
    figure_style.save_titled(
        fig, path,
        f"Population structure per session (aligned on {first or '-'}; bar: group "
        "median)")
