"""Which units count: the inclusion rules of config ``inclusion`` applied to one session.

Every rule is off by default, so every unit is kept unless the user asks. A unit failing
several rules lists every reason (``;``-separated), in the order of :data:`RULES`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.metrics.settings import InclusionSettings

#: the rules in the order their reasons are listed (names as in config ``inclusion``)
RULES = ("min_spikes", "min_rate_hz", "max_violation_fraction", "max_contamination", "labels",
         "min_trials_per_condition", "require_stable")


def trials_while_recorded(units: pd.DataFrame, spans: pd.DataFrame,
                          events: pd.DataFrame) -> pd.Series:
    """Per unit: the fewest trials of any condition whose event lies between the unit's first
    and last spike (``spans``: unit, first_s, last_s). No events: NaN."""
    if len(events) == 0:
        return pd.Series(np.nan, index=units["unit"])
    spans = spans.set_index("unit").reindex(units["unit"])
    fewest = None
    for _, times in events.groupby("condition", sort=True)["time_s"]:
        t = np.sort(times.to_numpy(float))
        n = (np.searchsorted(t, spans["last_s"].to_numpy(float), side="right")
             - np.searchsorted(t, spans["first_s"].to_numpy(float), side="left"))
        fewest = n if fewest is None else np.minimum(fewest, n)
    return pd.Series(fewest.astype(float), index=units["unit"])


def select_units(units: pd.DataFrame, *, settings: InclusionSettings,
                 labels: pd.Series | None, trials: pd.Series) -> pd.DataFrame:
    """``unit_selection``: every unit with ``included``, ``exclusion_reasons`` (in words),
    ``excluded_by`` (the config names of the rules it fails, ``;``-separated) and ``label``.

    ``units`` is the session's units table (with ``stable``); ``labels`` maps unit -> label
    (None when the sheet gives no label table); ``trials`` is :func:`trials_while_recorded`.
    """
    s = settings
    unit = units["unit"].astype(str)
    label = unit.map(labels).fillna("") if labels is not None else pd.Series("", index=unit.index)
    reasons: list[tuple[np.ndarray, list[str]]] = []

    names: list[str] = []

    def rule(name: str, failed: np.ndarray, text) -> None:
        failed = np.asarray(failed, dtype=bool)
        reasons.append((failed, [text(i) if failed[i] else "" for i in range(len(unit))]))
        names.append(name)

    n = units["n_spikes"].to_numpy()
    rate = units["rate_hz"].to_numpy(float)
    viol = units["refractory_violation_fraction"].to_numpy(float)
    cont = units["contamination_hill"].to_numpy(float)
    if s.min_spikes > 0:
        rule("min_spikes", n < s.min_spikes, lambda i: f"{n[i]} spikes, fewer than {s.min_spikes}")
    if s.min_rate_hz > 0:
        rule("min_rate_hz", ~(rate >= s.min_rate_hz),
             lambda i: f"rate {rate[i]:.3g} Hz, under {s.min_rate_hz:g} Hz")
    if s.max_violation_fraction is not None:
        rule("max_violation_fraction", ~(viol <= s.max_violation_fraction),
             lambda i: f"refractory violations {100 * viol[i]:.3g}%, over "
                       f"{100 * s.max_violation_fraction:g}%" if np.isfinite(viol[i]) else
             "refractory violations not measurable (fewer than 2 spikes)")
    if s.max_contamination is not None:
        rule("max_contamination", ~(cont <= s.max_contamination),
             lambda i: f"contamination {cont[i]:.3g}, over {s.max_contamination:g}"
             if np.isfinite(cont[i]) else "contamination not estimable")
    if s.labels is not None:
        accepted = set(s.labels)
        lab = label.to_numpy()
        rule("labels", ~np.isin(lab, list(accepted)),
             lambda i: f"label '{lab[i]}' not accepted" if lab[i] else "no label")
    if s.min_trials_per_condition > 0:
        t = trials.reindex(unit).to_numpy(float)
        rule("min_trials_per_condition", ~(t >= s.min_trials_per_condition),
             lambda i: f"{int(t[i])} trials of a condition while recorded, fewer than "
                       f"{s.min_trials_per_condition}" if np.isfinite(t[i]) else
             "no events to count trials")
    if s.require_stable:
        stable = units["stable"].to_numpy(bool)
        p = units["rate_drift_pvalue"].to_numpy(float)
        rule("require_stable", ~stable, lambda i: f"rate drifts over the session (p = {p[i]:.2g})"
             if np.isfinite(p[i]) else "stability not testable")
    text = ["; ".join(r[1][i] for r in reasons if r[1][i]) for i in range(len(unit))]
    by = [";".join(name for name, r in zip(names, reasons, strict=True) if r[0][i])
          for i in range(len(unit))]
    return pd.DataFrame({"unit": unit.to_numpy(), "included": [t == "" for t in text],
                         "exclusion_reasons": text, "excluded_by": by,
                         "label": label.to_numpy()})


def label_coverage(labels: pd.Series, units: list[str]) -> tuple[list[str], list[str]]:
    """(ids in the label table that are not units of the session, units without a label)."""
    known = set(units)
    unknown = sorted(set(labels.index) - known)
    unlabelled = [u for u in units if u not in labels.index or labels.get(u, "") == ""]
    return unknown, unlabelled
