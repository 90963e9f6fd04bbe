"""p-values of the time-rescaling KS statistic when the model was fitted to the same intervals.

With fitted parameters the KS distance is smaller than with known ones, so the known-parameter
(Kolmogorov) p-value is far too large: under the true model almost no fit would be rejected
(Lilliefors 1969, JASA 62:399, for the exponential). ``ks_null_table.json`` holds quantiles of
``sqrt(n) * KS`` simulated once per model and number of intervals ``n`` (trains drawn from
the model, the same model fitted; ``bench/calibrate_ks_null.py`` rebuilds it). ``poisson``
and ``dead_time`` are scale families; the ``exp_recovery`` null depends on the shape, mainly
on ``r_inf * tau``, and is tabulated on a grid of it. The p-value is read off that table,
interpolated in ``log n`` (and in ``log r_inf tau``); beyond the largest tabulated quantile
(the 99.9% point) the tail is extended as ``exp(-2 x^2)``, the Kolmogorov tail's shape, so
strong rejections still get small p-values (extrapolated there, not calibrated).
"""

from __future__ import annotations

import json
from functools import cache
from pathlib import Path

import numpy as np

TABLE = Path(__file__).with_name("ks_null_table.json")


@cache
def _table() -> dict:
    raw = json.loads(TABLE.read_text())
    return {"probabilities": np.array(raw["probabilities"]),
            "log_sizes": np.log(np.array(raw["sizes"], dtype=float)),
            "log_shapes": np.log(np.array(raw["exp_recovery_shapes"], dtype=float)),
            "quantiles": {m: np.array(q) for m, q in raw["quantiles"].items()},
            "reps": raw["reps"]}


def _interpolate(grid: np.ndarray, rows: np.ndarray, x: float) -> np.ndarray:
    """Linear interpolation of ``rows`` (first axis along ``grid``) at ``x``, clipped."""
    x = float(np.clip(x, grid[0], grid[-1]))
    k = int(np.clip(np.searchsorted(grid, x) - 1, 0, len(grid) - 2))
    w = (x - grid[k]) / (grid[k + 1] - grid[k])
    return (1 - w) * rows[k] + w * rows[k + 1]


def null_quantiles(model: str, n: int, shape: float = np.nan) -> np.ndarray:
    """Quantiles of ``sqrt(n) KS`` under the fitted model, interpolated in ``log n``.

    ``shape`` is the fitted ``r_inf * tau`` (used for ``exp_recovery`` only).
    """
    table = _table()
    q = table["quantiles"][model]
    if model == "exp_recovery":
        s = np.log(shape) if np.isfinite(shape) and shape > 0 else table["log_shapes"][0]
        q = _interpolate(table["log_shapes"], q, s)
    by_n = _interpolate(table["log_sizes"], q, np.log(max(n, 1)))
    return np.maximum.accumulate(by_n)


def fitted_ks_pvalue(ks_stat: float, n: int, model: str, shape: float = np.nan) -> float:
    """Upper-tail probability of ``ks_stat`` (a KS distance) under the fitted ``model``."""
    if not np.isfinite(ks_stat) or n <= 0:
        return np.nan
    x = ks_stat * np.sqrt(n)
    q = null_quantiles(model, n, shape)
    probs = _table()["probabilities"]
    if x <= q[-1]:
        return float(1.0 - np.interp(x, q, probs))
    top = 1.0 - probs[-1]
    return float(top * np.exp(-2.0 * (x * x - q[-1] ** 2)))


def fitted_ks_band(n: int, model: str, shape: float = np.nan) -> float:
    """Half-width of the 95% band of the KS plot under the fitted model (KS distance units)."""
    if n <= 0:
        return np.nan
    return float(np.interp(0.95, _table()["probabilities"], null_quantiles(model, n, shape))
                 / np.sqrt(n))
