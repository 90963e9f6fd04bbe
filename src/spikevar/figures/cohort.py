"""The cohort figure set (PNG + SVG), drawn from the cohort tables."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from spikevar.cohort.group_stats import METRICS
from spikevar.figures import style as figure_style


def _group_colours(groups):
    return {g: figure_style.SERIES[i % len(figure_style.SERIES)] for i, g in enumerate(groups)}


def _finish(fig, ax, path, *, xlabel: str, ylabel: str, title: str) -> None:
    """Label a single-panel figure, add its legend and save it (PNG + SVG)."""
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.set_title(title, loc="left")
    ax.legend(fontsize=7)
    fig.tight_layout()
    figure_style.save(fig, path)


#: rows of the population Fano figure per alignment: the estimate, then the data behind it
POPULATION_ROWS = (("fano", 2.2), ("units", 0.85), ("rate", 0.85))


def _no_value_marks(ax, part, column, colour) -> str:
    """Mark the windows of ``part`` where ``column`` has no value with a cross on the panel's
    lower edge; return the (first) reason the table gives, '' when every window has one."""
    import matplotlib.transforms as mtransforms

    missing = part[part[column].isna()]
    if missing.empty:
        return ""
    edge = mtransforms.blended_transform_factory(ax.transData, ax.transAxes)
    ax.plot(missing["time_s"], np.full(len(missing), 0.04), ls="none", marker="x", ms=5,
            mew=1.4, color=colour, transform=edge, clip_on=False)
    reasons = missing["population_reason"].replace("", np.nan).dropna()
    return str(reasons.iloc[0]) if len(reasons) else "no value"


def _kept_range(part: pd.DataFrame) -> str:
    """'26 of 120 units kept' (ranges where the counts change over the windows)."""
    def span(values):
        values = values.dropna().astype(int)
        if values.empty:
            return "0"
        lo, hi = values.min(), values.max()
        return f"{lo}" if lo == hi else f"{lo}-{hi}"
    return f"{span(part['n_units_matched'])} of {span(part['n_units'])} kept"


def population_fano_figure(pop: pd.DataFrame, path) -> None:
    """Population Fano factor over event-aligned time and the data behind each point: per
    alignment a row of Fano panels (mean-matched with its interval, all units dashed; crosses
    on the lower edge where the table has no mean-matched value), a row of unit counts (all
    usable units dashed, units mean matching kept solid) and a row of mean rates (all units
    dashed, kept units solid); one column per group, one colour and marker per condition."""
    import matplotlib.pyplot as plt

    if "alignment" not in pop:
        pop = pop.assign(alignment="event")
    for column in ("mean_count_matched", "n_units_matched"):
        if column not in pop:
            pop = pop.assign(**{column: np.nan})
    groups = sorted(pop["group"].unique()) if len(pop) else ["(none)"]
    alignments = sorted(pop["alignment"].unique()) if len(pop) else ["event"]
    conditions = sorted(pop["condition"].unique()) if len(pop) else []
    colours = _group_colours(conditions)
    ratios = [r for _, r in POPULATION_ROWS] * len(alignments)
    fig, axes = plt.subplots(len(ratios), len(groups),
                             figsize=(4.4 * len(groups), 0.5 + 1.45 * sum(ratios)),
                             squeeze=False, sharex=True, gridspec_kw={"height_ratios": ratios})
    for a, alignment in enumerate(alignments):
        for j, group in enumerate(groups):
            top, units_ax, rate_ax = (axes[len(POPULATION_ROWS) * a + r, j] for r in range(3))
            missing_reasons, kept_notes = set(), []
            for k, cond in enumerate(conditions):
                part = pop[(pop["group"] == group) & (pop["condition"] == cond)
                           & (pop["alignment"] == alignment)].sort_values("time_s")
                if part.empty:
                    continue
                c, marker = colours[cond], figure_style.MARKERS[k % len(figure_style.MARKERS)]
                every = max(1, len(part) // 8)
                top.fill_between(part["time_s"], part["ci_lo"], part["ci_hi"], color=c,
                                 alpha=0.18, linewidth=0)
                top.plot(part["time_s"], part["fano_mean_matched"], color=c, lw=1.8,
                         marker=marker, markevery=every, ms=4, label=f"{cond}: mean-matched")
                top.plot(part["time_s"], part["fano_regression"], color=c, lw=1.0, ls="--",
                         label=f"{cond}: all units")
                reason = _no_value_marks(top, part, "fano_mean_matched", c)
                if reason:
                    missing_reasons.add(reason)
                kept_notes.append(f"{cond}: {_kept_range(part)}")
                units_ax.plot(part["time_s"], part["n_units"], color=c, lw=1.0, ls="--",
                              drawstyle="steps-mid")
                units_ax.plot(part["time_s"], part["n_units_matched"], color=c, lw=1.6,
                              marker=marker, markevery=every, ms=3.5, drawstyle="steps-mid")
                rate_ax.plot(part["time_s"], part["mean_count"] / part["window_s"], color=c,
                             lw=1.0, ls="--")
                rate_ax.plot(part["time_s"], part["mean_count_matched"] / part["window_s"],
                             color=c, lw=1.6, marker=marker, markevery=every, ms=3.5)
            for ax in (top, units_ax, rate_ax):
                ax.axvline(0.0, color=figure_style.INK, lw=0.9, ls=":")
            top.axhline(1.0, color=figure_style.REFERENCE, lw=0.8)
            top.set_title(f"group {group}, aligned on {alignment}", loc="left")
            top.set_ylabel("Fano factor")
            units_ax.set_ylabel("units")
            units_ax.set_ylim(0, 1.5 * max(units_ax.get_ylim()[1], 1))
            units_ax.text(0.01, 0.97, "solid: kept by mean matching, dashed: all units\n"
                          + ";  ".join(kept_notes), transform=units_ax.transAxes, va="top",
                          fontsize=7, color=figure_style.INK)
            rate_ax.set_ylabel("mean rate (Hz)")
            if missing_reasons:
                top.text(0.01, 0.1, "× no mean-matched value: " + "; ".join(sorted(
                    missing_reasons)), transform=top.transAxes, fontsize=7,
                    color=figure_style.INK, va="bottom", wrap=True)
            if a == 0 and j == len(groups) - 1:
                top.legend(fontsize=7, loc="upper right")
    for row in range(len(ratios)):  # one scale per row, so groups compare at a glance
        if POPULATION_ROWS[row % len(POPULATION_ROWS)][0] != "units":
            lows, highs = zip(*(ax.get_ylim() for ax in axes[row]), strict=True)
            for ax in axes[row]:
                ax.set_ylim(min(lows), max(highs))
    for j in range(len(groups)):
        axes[-1, j].set_xlabel("time from the alignment event (s; window centre)")
    figure_style.save_titled(
        fig, path,
        "Population Fano factor around each alignment event, with the units and rates behind "
        "each point (bands: 95% interval, animals resampled; dotted line: the event)")


def unit_metric_figure(frame: pd.DataFrame, summary: pd.DataFrame, path) -> None:
    """Distribution of each unit metric by group with the hierarchical-bootstrap interval."""
    import matplotlib.pyplot as plt
    import seaborn as sns

    groups = sorted(frame["group"].astype(str).unique())
    colours = _group_colours(groups)
    metrics = list(METRICS)
    fig, axes = plt.subplots(2, 4, figsize=(13, 6.2))
    for ax, metric in zip(axes.ravel(), metrics, strict=True):
        data = frame[["group", metric]].dropna()
        if not data.empty:
            # seaborn jitters from numpy's global generator: seeded, the same figure each time
            np.random.seed(0)  # noqa: NPY002
            # the dots are drawn as an image inside the SVG (axes and text stay vector): one
            # vector mark per unit made a 20,000-unit cohort's SVG take 14 s to write
            sns.stripplot(data=data, x="group", y=metric, order=groups, hue="group",
                          palette=colours, size=3, alpha=0.5, jitter=0.25, ax=ax, legend=False,
                          rasterized=True)
        rows = summary[summary["metric"] == metric].set_index("group")
        for i, g in enumerate(groups):
            if g in rows.index and np.isfinite(rows.loc[g, "mean"]):
                r = rows.loc[g]
                ax.errorbar(i + 0.32, r["mean"], yerr=[[r["mean"] - r["mean_ci_lo"]],
                                                        [r["mean_ci_hi"] - r["mean"]]],
                            fmt=figure_style.MARKERS[i], color=figure_style.INK, ms=5,
                            capsize=3, lw=1.2)
        if metric in ("rate_hz", "recovery_tau_s", "dead_time_s") and (data[metric] > 0).all() \
                and not data.empty:
            ax.set_yscale("log")
        ax.set_title(METRICS[metric], loc="left")
        ax.set_xlabel("group")
        ax.set_ylabel(METRICS[metric])
    figure_style.save_titled(
        fig, path,
        "Unit metrics by group (dots: units; black: mean with 95% hierarchical "
        "bootstrap interval over subject > session > unit)")


def fano_window_figure(count_fano: pd.DataFrame, units: pd.DataFrame, path) -> None:
    """Count Fano factor against counting window, with the Poisson line and the CV^2 level."""
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6.2, 4.2))
    groups = sorted(count_fano["group"].astype(str).unique()) if len(count_fano) else []
    colours = _group_colours(groups)
    for i, g in enumerate(groups):
        part = count_fano[count_fano["group"].astype(str) == g]
        stats = part.groupby("window_s")["fano"].quantile([0.25, 0.5, 0.75]).unstack()
        c = colours[g]
        ax.fill_between(stats.index, stats[0.25], stats[0.75], color=c, alpha=0.18, lw=0)
        ax.plot(stats.index, stats[0.5], color=c, marker=figure_style.MARKERS[i], lw=1.6,
                label=f"{g}: median, quartiles")
        cv2 = (units.loc[units["group"].astype(str) == g, "isi_cv"] ** 2).median()
        ax.axhline(cv2, color=c, ls=(0, (4, 2, 1, 2)), lw=1.0, label=f"{g}: median ISI CV²")
    ax.axhline(1.0, color=figure_style.INK, lw=1.0, ls=":", label="Poisson (FF = 1)")
    ax.set_xscale("log")
    _finish(fig, ax, path, xlabel="counting window (s, log scale)", ylabel="count Fano factor",
            title="Count Fano factor by counting window")


def tau_cv_figure(frame: pd.DataFrame, path) -> None:
    """Recovery time constant against ISI CV, one colour and marker per group."""
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(5.6, 4.2))
    groups = sorted(frame["group"].astype(str).unique())
    colours = _group_colours(groups)
    for i, g in enumerate(groups):
        part = frame[(frame["group"].astype(str) == g)].dropna(subset=["recovery_tau_s",
                                                                       "isi_cv"])
        ax.scatter(part["isi_cv"], part["recovery_tau_s"] * 1e3, color=colours[g],
                   marker=figure_style.MARKERS[i], s=22, alpha=0.75, edgecolor="white",
                   linewidth=0.4, label=f"{g} (n = {len(part)})",
                   rasterized=True)  # one dot per unit: an image inside the SVG
    ax.set_yscale("log")
    _finish(fig, ax, path, xlabel="ISI coefficient of variation",
            ylabel="recovery time constant τ (ms, log scale)",
            title="Refractory recovery against firing irregularity")


#: the figures being drawn, read by forked workers (inherited memory, not copied per task)
_DRAWING: dict = {}


def _figure_tasks(tables, frame, summary, outputs) -> list:
    """One call per figure (each draws and saves its PNG and SVG)."""
    from spikevar.figures.quality import quality_figure, stability_figure
    from spikevar.figures.shared import (
        r_sc_rate_figure,
        shared_structure_figure,
        shared_time_figure,
    )

    # the slowest first, so two workers finish together
    return [
        lambda: unit_metric_figure(frame, summary, outputs["unit_metrics"]),
        lambda: population_fano_figure(tables["population_fano"], outputs["population_fano"]),
        lambda: quality_figure(tables["units"], tables["recovery"], tables["unit_selection"],
                               outputs["quality"]),
        lambda: stability_figure(tables["unit_blocks"], tables["units"], outputs["stability"]),
        lambda: shared_time_figure(tables["shared_over_time"], outputs["shared_over_time"]),
        lambda: fano_window_figure(tables["count_fano"], tables["units"],
                                   outputs["fano_by_window"]),
        lambda: tau_cv_figure(frame, outputs["tau_vs_cv"]),
        lambda: r_sc_rate_figure(tables["r_sc_by_rate"], outputs["r_sc_vs_rate"]),
        lambda: shared_structure_figure(tables["population_structure"],
                                        outputs["shared_structure"]),
    ]


def _draw_task(k: int) -> None:
    _DRAWING["tasks"][k]()


def draw_cohort_figures(*, tables: dict[str, pd.DataFrame], frame: pd.DataFrame,
                        summary: pd.DataFrame, outputs: dict[str, str],
                        workers: int = 1) -> None:
    """Draw every cohort figure into ``outputs`` (PNG paths; SVG written alongside), over
    ``workers`` forked processes (each figure is drawn whole by one of them; the files are the
    same for any number)."""
    figure_style.apply_style()
    for path in outputs.values():
        Path(path).parent.mkdir(parents=True, exist_ok=True)
    tasks = _figure_tasks(tables, frame, summary, outputs)
    if workers <= 1:
        for task in tasks:
            task()
        return
    import multiprocessing

    _DRAWING["tasks"] = tasks
    try:
        with multiprocessing.get_context("fork").Pool(min(workers, len(tasks))) as pool:
            pool.map(_draw_task, range(len(tasks)), chunksize=1)
    finally:
        _DRAWING.clear()
