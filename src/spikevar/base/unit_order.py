"""The one order of unit ids, shared by ingestion and the in-memory spike arrays."""

from __future__ import annotations

import re

import numpy as np

INTEGER = re.compile(r"[+-]?[0-9]+")


def unit_sort_order(labels: np.ndarray) -> np.ndarray:
    """Order of unit ids: by integer value when every id is an integer, else as text.

    Sorters often number units 0, 1, 2, ...; "2" then comes before "10". Ties in value
    ("3" and "003") are broken by the text. Only ASCII digits count: "²" is a digit to
    Python's ``isdigit`` but not an integer.
    """
    labels = np.asarray(labels).astype(str)
    if len(labels) and all(INTEGER.fullmatch(label.strip()) for label in labels):
        values = np.array([int(label) for label in labels], dtype=float)
        return np.lexsort((labels, values))
    return np.argsort(labels, kind="stable")
