"""Conditions made of several factors: one readable label, and each factor as its own column.

With ``columns.event_condition: [contrast, side]`` an event whose contrast is ``high`` and side
``left`` has the condition ``contrast=high; side=left``. Every table that carries ``condition``
also carries one column per factor (named after the event-table column), parsed back from the
label, so tables can be filtered by one factor without string handling (a factor column called
``condition`` is written as ``condition_factor``, since ``condition`` holds the label).
"""

from __future__ import annotations

import pandas as pd

#: between the factors of one label, and between a factor's name and its value
FACTOR_SEPARATOR = "; "
NAME_VALUE = "="


def factor_names(event_condition) -> tuple[str, ...]:
    """The factors of config ``columns.event_condition`` (empty for a single column)."""
    if isinstance(event_condition, str):
        return ()
    return tuple(event_condition)


def combined_labels(values: dict[str, list[str]]) -> list[str]:
    """``{factor: values}`` (equal lengths) -> one label per row, factors in the given order."""
    names = list(values)
    rows = zip(*(values[n] for n in names), strict=True)
    return [FACTOR_SEPARATOR.join(f"{n}{NAME_VALUE}{v}" for n, v in zip(names, row,
                                                                          strict=True))
            for row in rows]


def unsafe_values(values: list[str]) -> list[str]:
    """Factor values that would make a label ambiguous (they hold a separator)."""
    return sorted({v for v in values if NAME_VALUE in v or FACTOR_SEPARATOR.strip() in v})


def factor_column(factor: str) -> str:
    """The column a factor is written to: its own name, except that a factor called
    ``condition`` becomes ``condition_factor`` (``condition`` is the combined label)."""
    return "condition_factor" if factor == "condition" else factor


def with_factor_columns(frame: pd.DataFrame, factors: tuple[str, ...]) -> pd.DataFrame:
    """``frame`` with one column per factor right after ``condition`` ('' where the row has
    no condition, e.g. the unit-metric rows of the group summary)."""
    if not factors or "condition" not in frame.columns:
        return frame
    parsed = {f: [] for f in factors}
    for label in frame["condition"].astype(str):
        pairs = dict(part.split(NAME_VALUE, 1) for part in label.split(FACTOR_SEPARATOR)
                     if NAME_VALUE in part)
        for f in factors:
            parsed[f].append(pairs.get(f, ""))
    out = frame.drop(columns=[factor_column(f) for f in factors
                              if factor_column(f) in frame.columns])
    at = list(out.columns).index("condition") + 1
    for offset, f in enumerate(factors):
        out.insert(at + offset, factor_column(f), parsed[f])
    return out
