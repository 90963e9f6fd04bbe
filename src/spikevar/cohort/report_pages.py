"""The report's own pages: the start page (a summary of the run) and the group tables as HTML.

``snakemake --report`` shows the start page beside the rule graph and lists the two tables under
the category "Group statistics". The start page is reStructuredText that Snakemake renders with
Jinja2, so everything written here sits inside one ``raw`` block and is escaped for
reStructuredText.
"""

from __future__ import annotations

import html
import math

import pandas as pd

from spikevar.base.layout import REPORT_CATEGORIES
from spikevar.cohort.data_dictionary import describe

#: metrics on the start page: unit metrics, then shared metrics of the first alignment and
#: condition (one row per epoch); the full tables hold every metric and stratum
START_PAGE_UNIT_METRICS = {"rate_hz": "rate (Hz)", "isi_cv": "ISI CV", "isi_lv": "LV",
                           "fano_long": "Fano factor, longest window",
                           "recovery_tau_s": "recovery tau (ms)", "dead_time_s": "dead time (ms)"}
START_PAGE_SHARED = {"mean_r_sc": "r_sc", "percent_shared": "% shared"}
#: metrics in seconds shown in milliseconds on the start page
IN_MILLISECONDS = ("recovery_tau_s", "dead_time_s")
#: marks in the start page's p column
FEW_SUBJECTS_MARK = "few"
MINIMUM_MARK = "min"
DISCLAIMER = ("Statistical estimates for research: their validity depends on spike-sorting "
              "quality and on stationary recordings. Not for clinical decisions.")
#: style of the start page: content from the top of the window, compact headings
START_PAGE_STYLE = ("div.grow.flex.items-center.justify-center.h-screen { align-items: "
                    "flex-start; } .prose h1 { font-size: 1.5rem; margin-bottom: 0.4em; } "
                    ".prose h2 { font-size: 1.1rem; margin: 1em 0 0.4em; } "
                    ".prose table { margin: 0.5em 0; }")
#: what each report category holds (one line each on the start page)
CATEGORY_LINES = dict(REPORT_CATEGORIES)


def number(value, digits: int = 3) -> str:
    """A value with ``digits`` significant digits ("n/a" for missing)."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "n/a"
    value = float(value)
    if value == 0:
        return "0"
    text = f"{value:.{digits}g}"
    return text.replace("e-0", "e-").replace("e+0", "e+")


def with_interval(mean, lo, hi) -> str:
    """``mean [lo, hi]`` with as many decimals as give the interval's width two significant
    digits (so a mean near zero reads 0.000, not 3.87e-5)."""
    values = [float(v) if v is not None else math.nan for v in (mean, lo, hi)]
    width = values[2] - values[1]
    if any(math.isnan(v) for v in values) or width <= 0:
        return f"{number(mean)} [{number(lo, 2)}, {number(hi, 2)}]"
    decimals = max(0, 1 - math.floor(math.log10(width)))
    m, a, b = (f"{v:.{decimals}f}" for v in values)
    return f"{m} [{a}, {b}]".replace("-0.000 ", "0.000 ") if decimals else f"{m} [{a}, {b}]"


def rst_text(text) -> str:
    """Text safe inside reStructuredText (markup characters escaped)."""
    out = str(text)
    for char in "\\*`_|[]":
        out = out.replace(char, "\\" + char)
    return out


def list_table(header: list[str], rows: list[list[str]], widths: str = "auto") -> list[str]:
    lines = [".. list-table::", "   :header-rows: 1", f"   :widths: {widths}", ""]
    for row in [header, *rows]:
        lines.append(f"   * - {rst_text(row[0])}")
        lines += [f"     - {rst_text(cell)}" for cell in row[1:]]
    return lines + [""]


def cohort_counts(units: pd.DataFrame) -> pd.DataFrame:
    """Per group: subjects, sessions and units analysed (and included, once units carry an
    ``included`` column)."""
    included = units["included"].astype(bool) if "included" in units.columns else \
        pd.Series(True, index=units.index)
    frame = units.assign(_included=included)
    counts = frame.groupby("group", sort=True).agg(
        subjects=("subject", "nunique"), sessions=("session", "nunique"),
        units=("unit", "size"), units_included=("_included", "sum"))
    return counts.reset_index()


def _start_page_rows(frame: pd.DataFrame, alignment: str | None) -> pd.DataFrame:
    """The rows of a group table the start page shows, labelled, in display order."""
    unit_level = frame[(frame["alignment"] == "") & frame["metric"].isin(START_PAGE_UNIT_METRICS)]
    unit_level = unit_level.assign(
        label=unit_level["metric"].map(START_PAGE_UNIT_METRICS),
        order=unit_level["metric"].map({m: i for i, m in enumerate(START_PAGE_UNIT_METRICS)}))
    shared = frame[frame["metric"].isin(START_PAGE_SHARED)
                   & (frame["alignment"] == (alignment or ""))]
    if len(shared):
        shared = shared[shared["condition"] == sorted(shared["condition"].unique())[0]]
        shared = shared.assign(
            label=shared["metric"].map(START_PAGE_SHARED) + ", " + shared["epoch"],
            order=len(START_PAGE_UNIT_METRICS)
            + shared["metric"].map({m: i for i, m in enumerate(START_PAGE_SHARED)}))
    rows = pd.concat([unit_level, shared]).sort_values("order", kind="stable")
    scale = rows["metric"].isin(IN_MILLISECONDS).map({True: 1000.0, False: 1.0})
    for column in [c for c in rows.columns if c.startswith(("mean", "diff_mean"))]:
        if pd.api.types.is_float_dtype(rows[column]):
            rows[column] = rows[column] * scale
    return rows


def headline_table(summary: pd.DataFrame, differences: pd.DataFrame, *,
                   alignment: str | None) -> tuple[list[str], list[list[str]], dict]:
    """The start page's results table: one row per headline metric, the group means with
    their 95% intervals, and (with two groups) the permutation p-value of the difference.

    Returns (header, rows, facts) where facts says which condition the shared rows show and
    whether every comparison has few subjects."""
    means = _start_page_rows(summary, alignment)
    groups = sorted(means["group"].unique())
    pairs = differences[["group_a", "group_b"]].drop_duplicates()
    with_p = len(groups) == 2 and len(pairs) == 1
    diffs = _start_page_rows(differences, alignment) if with_p else differences.iloc[:0]
    few = diffs["few_subjects"].astype(bool) if len(diffs) else pd.Series(dtype=bool)
    all_few = bool(len(few)) and bool(few.all())
    key = ["metric", "alignment", "condition", "epoch"]
    p_of = {tuple(r[k] for k in key): r for _, r in diffs.iterrows()}
    rows = []
    for _, block in means.groupby(key, sort=False):
        by_group = {r["group"]: r for _, r in block.iterrows()}
        first = block.iloc[0]
        row = [first["label"]] + [
            with_interval(by_group[g]["mean"], by_group[g]["mean_ci_lo"],
                          by_group[g]["mean_ci_hi"]) if g in by_group else "n/a"
            for g in groups]
        if with_p:
            d = p_of.get(tuple(first[k] for k in key))
            row.append("n/a" if d is None else _p_text(d, mark_few=not all_few))
        rows.append(row)
    header = ["metric", *groups] + ([f"p ({groups[0]} vs {groups[1]})"] if with_p else [])
    shared = means[means["alignment"] != ""]
    facts = {"condition": shared["condition"].iloc[0] if len(shared) else None,
             "all_few": all_few, "with_p": with_p}
    return header, rows, facts


def _p_text(row, *, mark_few: bool) -> str:
    p = number(row["p_permutation"], 2)
    if row["p_permutation"] <= row.get("p_permutation_min", 0):
        p = f"{p} {MINIMUM_MARK}"
    if mark_few and bool(row.get("few_subjects", False)):
        p = f"{p} {FEW_SUBJECTS_MARK}"
    return p


def start_page(*, units: pd.DataFrame, summary: pd.DataFrame, differences: pd.DataFrame,
               sessions: list[str], alignment: str | None, categories: list[str]) -> str:
    """The report's start page (reStructuredText, wrapped for Snakemake's Jinja2 step).

    The report centres the start page and the rule graph vertically, which cuts off the top
    of anything taller than the window; the page's own style block aligns them to the top
    (it applies only while the start page is shown)."""
    counts = cohort_counts(units)
    n_units, n_included = int(counts["units"].sum()), int(counts["units_included"].sum())
    analysed = set(units["session"].unique())
    missing = [s for s in sessions if s not in analysed]
    lines = ["spikevar results", "================", "", ".. raw:: html", "",
             f"   <style>{START_PAGE_STYLE}</style>", "", f"*{rst_text(DISCLAIMER)}*", "",
             "Cohort at a glance", "------------------", ""]
    text = (f"{len(sessions)} sessions, {units['subject'].nunique()} subjects, "
            f"{len(counts)} groups, {n_units} units ({n_included} included in the population "
            "and group statistics). ")
    text += "; ".join(f"{r.group}: {r.subjects} subjects, {r.sessions} sessions, "
                      f"{int(r.units_included)} units" for r in counts.itertuples()) + "."
    if missing:
        text += f" Sessions without results: {', '.join(missing)}."
    lines += [rst_text(text), ""]
    header, rows, facts = headline_table(summary, differences, alignment=alignment)
    lines += ["Main group results", "------------------", ""]
    text = "Group means [95% hierarchical-bootstrap interval]"
    if facts["with_p"]:
        text += ("; p: permutation test of the difference, subjects swapped between groups "
                 f"('{MINIMUM_MARK}': the smallest p these subjects allow")
        text += ("). Every group has fewer than 5 subjects: the intervals are too narrow, the "
                 "permutation p is the honest one" if facts["all_few"] else
                 f"; '{FEW_SUBJECTS_MARK}': fewer than 5 subjects in a group)")
    text += "."
    if facts["condition"] is not None:
        text += (f" r_sc and % shared: alignment '{alignment}', condition "
                 f"'{facts['condition']}'.")
    text += " Every metric and stratum: Group statistics."
    lines += [rst_text(text), ""]
    lines += list_table(header, rows)
    lines += ["What the report holds", "---------------------", ""]
    for name in categories:
        if name in CATEGORY_LINES:
            lines.append(f"- **{rst_text(name)}**: {rst_text(CATEGORY_LINES[name])}")
    lines += [""]
    return "{% raw %}\n" + "\n".join(lines) + "\n{% endraw %}\n"


TABLE_STYLE = """
body { font-family: system-ui, sans-serif; font-size: 13px; color: #1d2433; margin: 12px; }
h1 { font-size: 17px; margin: 0 0 4px; }
p.note { color: #4a5468; max-width: 60em; margin: 0 0 10px; }
table { border-collapse: collapse; }
th { background: #e7ecf3; text-align: left; position: sticky; top: 0; }
th, td { padding: 3px 8px; border-bottom: 1px solid #d5dbe5; white-space: nowrap; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
tr:nth-child(even) td { background: #f6f8fb; }
"""


def table_page(frame: pd.DataFrame, *, table: str, title: str, note: str) -> str:
    """A self-contained HTML page showing ``frame``; each column header explains itself
    (its data-dictionary meaning as a tooltip)."""
    head = "".join(f'<th title="{html.escape(describe(table, c)[0])}">{html.escape(c)}</th>'
                   for c in frame.columns)
    numeric = {c for c in frame.columns if pd.api.types.is_float_dtype(frame[c])}
    body = []
    for row in frame.itertuples(index=False):
        cells = []
        for column, value in zip(frame.columns, row, strict=True):
            if column in numeric:
                cells.append(f'<td class="num">{number(value, 4)}</td>')
            else:
                cells.append(f"<td>{html.escape(str(value))}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return ("<!doctype html><html><head><meta charset='utf-8'>"
            f"<title>{html.escape(title)}</title><style>{TABLE_STYLE}</style></head><body>"
            f"<h1>{html.escape(title)}</h1><p class='note'>{html.escape(note)}</p>"
            f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"
            "</body></html>\n")


SUMMARY_NOTE = ("Mean and median of each metric per group with 95% hierarchical-bootstrap "
                "intervals (subjects, then sessions, then units resampled). Rows with an "
                "alignment, condition and epoch are shared-variability metrics of that "
                "stratum. Hover a column name for its meaning; the same table is "
                "cohort/group_summary.parquet.")
DIFFERENCES_NOTE = ("Differences group_a - group_b of the mean and median with 95% bootstrap "
                    "intervals and p-values, and the subject-level permutation p-value "
                    "(p_permutation; p_permutation_min is the smallest value it can take with "
                    "these subjects). few_subjects marks groups with fewer than 5 subjects. "
                    "The same table is cohort/group_differences.parquet.")


def run_report_pages(*, units, summary, differences, sessions: list[str],
                     alignment: str | None, categories: list[str], start_out, summary_out,
                     differences_out) -> None:
    """Entry of rule report_pages: write the start page and the two table pages."""
    from pathlib import Path

    from spikevar.base.parquet_io import read_frame
    from spikevar.cohort.handoff import write_atomic_text

    units, summary, differences = read_frame(units), read_frame(summary), \
        read_frame(differences)
    write_atomic_text(Path(start_out), start_page(
        units=units, summary=summary, differences=differences, sessions=sessions,
        alignment=alignment, categories=categories))
    write_atomic_text(Path(summary_out), table_page(
        summary, table="group_summary", title="Group summary", note=SUMMARY_NOTE))
    write_atomic_text(Path(differences_out), table_page(
        differences, table="group_differences", title="Group differences",
        note=DIFFERENCES_NOTE))
