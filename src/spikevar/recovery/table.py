"""Per-session refractory-recovery table: every unit, every model, with goodness of fit."""

from __future__ import annotations

import logging
import multiprocessing
from dataclasses import asdict

import numpy as np
import pandas as pd

from spikevar.base.parquet_io import frame_to_arrow, write_parquet_atomic
from spikevar.base.spike_arrays import SpikeArrays, load_spikes, recording_span
from spikevar.recovery.fit import (
    Fit,
    Intervals,
    fit_dead_time,
    fit_exp_recovery_modulated_units,
    fit_exp_recovery_units,
    fit_poisson,
    ks_uniform,
    nested_lr_pvalues,
    preferred_model,
    rescaled_intervals,
)
from spikevar.recovery.ks_null import fitted_ks_band, fitted_ks_pvalue
from spikevar.recovery.settings import RecoverySettings

log = logging.getLogger(__name__)

COLUMNS = ["unit", "model", "fit_kind", "asymptotic_rate_hz", "recovery_tau_s", "dead_time_s",
           "tau_ci_lo", "tau_ci_hi", "log_likelihood", "aic", "nested_lr_pvalue", "ks_stat",
           "ks_pvalue", "ks_pvalue_known_params", "ks_band_95", "n_intervals", "converged",
           "tau_at_bound", "preferred", "fit_note"]


def _row(unit: str, fit: Fit, iv: Intervals | None, kind: str) -> dict:
    n = iv.n if iv is not None else 0
    shape = fit.rate_hz * fit.tau_s  # r_inf tau: the exp_recovery null depends on it
    if iv is not None and np.isfinite(fit.log_likelihood):
        ks, p_known = ks_uniform(rescaled_intervals(fit, iv))
        p = fitted_ks_pvalue(ks, n, fit.model, shape)
    else:
        ks, p, p_known = np.nan, np.nan, np.nan
    return {"unit": unit, "model": fit.model, "fit_kind": kind,
            "asymptotic_rate_hz": fit.rate_hz, "recovery_tau_s": fit.tau_s,
            "dead_time_s": fit.dead_time_s, "tau_ci_lo": fit.tau_ci[0],
            "tau_ci_hi": fit.tau_ci[1], "log_likelihood": fit.log_likelihood,
            "aic": fit.aic, "nested_lr_pvalue": np.nan, "ks_stat": ks, "ks_pvalue": p,
            "ks_pvalue_known_params": p_known,
            "ks_band_95": fitted_ks_band(n, fit.model, shape) if n else np.nan, "n_intervals": n,
            "converged": bool(fit.converged), "tau_at_bound": fit.tau_at_bound,
            "preferred": False, "fit_note": fit.note}


def unit_recovery_rows(unit: str, times: np.ndarray, *, span_s: tuple[float, float],
                       settings: RecoverySettings) -> list[dict]:
    """All model rows for one unit (:func:`units_recovery_rows`)."""
    return units_recovery_rows([unit], [times], span_s=span_s, settings=settings)


def units_recovery_rows(units: list[str], trains: list[np.ndarray], *,
                        span_s: tuple[float, float], settings: RecoverySettings) -> list[dict]:
    """All model rows of each unit (stationary fits, then the slow-rate-modulated fit), the
    units' exp_recovery fits computed together; rows in unit order.

    Notes
    -----
    The first interval (recording start to first spike) is dropped; the last (last spike to
    recording end) is right-censored. Fewer than ``min_intervals`` intervals, or all intervals
    equal, give rows of NaN with ``converged = False`` and the reason in ``fit_note``.
    ``preferred`` marks the stationary model chosen by nested likelihood-ratio tests
    (:func:`spikevar.recovery.fit.preferred_model`); ``nested_lr_pvalue`` is each model's
    p-value against the next simpler one. ``aic`` is kept as a column.
    """
    rows: list[list[dict]] = [[] for _ in units]
    fitted, ivs, orders = [], [], []
    for j, (unit, times) in enumerate(zip(units, trains, strict=True)):
        isi = np.diff(times)
        if len(isi) < settings.min_intervals or np.ptp(isi) == 0:
            note = (f"too few intervals ({len(isi)} < {settings.min_intervals})"
                    if len(isi) < settings.min_intervals else "all intervals equal")
            kinds = [("stationary", m) for m in ("poisson", "dead_time", "exp_recovery")]
            if settings.modulated_fit:
                kinds.append(("slow_rate_modulated", "exp_recovery"))
            rows[j] = [dict(_row(unit, Fit(m, note=note), None, k), n_intervals=len(isi))
                       for k, m in kinds]
            continue
        order = np.argsort(isi)  # ties in any order: the fits' sums do not depend on it
        fitted.append(j)
        orders.append(order)
        ivs.append(Intervals.build(isi, censored=span_s[1] - times[-1], order=order))
    recovery = fit_exp_recovery_units(ivs, with_interval=settings.tau_interval)
    for j, iv, exp_fit in zip(fitted, ivs, recovery, strict=True):
        fits = [fit_poisson(iv), fit_dead_time(iv), exp_fit]
        unit_rows = [_row(units[j], f, iv, "stationary") for f in fits]
        by_model = {f.model: f for f in fits}
        p_values = nested_lr_pvalues(by_model, iv.n)
        choice = preferred_model(by_model, iv.n)
        for row in unit_rows:
            row["nested_lr_pvalue"] = p_values[row["model"]]
            row["preferred"] = row["model"] == choice
        rows[j] = unit_rows
    if settings.modulated_fit and fitted:
        modulated = fit_exp_recovery_modulated_units(
            [trains[j] for j in fitted], span_s=span_s,
            bandwidth_s=settings.slow_rate_bandwidth_s,
            with_interval=settings.modulated_tau_interval, orders=orders, same_intervals=ivs)
        for j, (fit, weighted) in zip(fitted, modulated, strict=True):
            rows[j].append(_row(units[j], fit, weighted, "slow_rate_modulated"))
    return [row for unit_rows in rows for row in unit_rows]


#: below this many spikes a session's units are fitted in one process (starting workers would
#: cost more than it saves)
PARALLEL_MIN_SPIKES = 1_000_000
#: the units fitted together at a time: at most this many units ...
UNITS_PER_TASK = 32
#: ... and at most this many spikes (a unit with more is fitted on its own): the working
#: arrays of the units fitted together stay near 50 MB, whatever the session's size
SPIKES_PER_TASK = 400_000

#: the session being fitted, read by forked workers (inherited memory, not copied per task)
_SESSION: dict = {}


def _fit_units(first: int, stop: int) -> list[dict]:
    spikes, bounds = _SESSION["spikes"], _SESSION["bounds"]
    return units_recovery_rows([str(spikes.labels[k]) for k in range(first, stop)],
                               [spikes.times[bounds[k]:bounds[k + 1]] for k in range(first, stop)],
                               span_s=_SESSION["span_s"], settings=_SESSION["settings"])


def _fit_units_task(task: tuple[int, int]) -> list[dict]:
    return _fit_units(*task)


def unit_tasks(bounds: np.ndarray) -> list[tuple[int, int]]:
    """Consecutive runs of units ``(first, stop)`` of at most ``UNITS_PER_TASK`` units and
    ``SPIKES_PER_TASK`` spikes (or one unit), in unit order."""
    tasks, first = [], 0
    n = len(bounds) - 1
    while first < n:
        stop = first + 1
        while (stop < n and stop - first < UNITS_PER_TASK
               and bounds[stop + 1] - bounds[first] <= SPIKES_PER_TASK):
            stop += 1
        tasks.append((first, stop))
        first = stop
    return tasks


def recovery_table(spikes: SpikeArrays, *, span_s: tuple[float, float],
                   settings: RecoverySettings, workers: int = 1) -> pd.DataFrame:
    """Fit every unit of a session (each fit is vectorised over intervals).

    The units are fitted together a run at a time (:func:`unit_tasks`). With ``workers > 1``
    and at least ``PARALLEL_MIN_SPIKES`` spikes the runs are shared out over that many forked
    processes and the rows gathered in unit order: the table is the same whatever the number
    of workers or the runs (each unit's fit depends on its own spikes only).
    """
    bounds = spikes.bounds()
    _SESSION.update(spikes=spikes, bounds=bounds, span_s=span_s, settings=settings)
    try:
        tasks = unit_tasks(bounds)
        if workers > 1 and len(tasks) > 1 and len(spikes.times) >= PARALLEL_MIN_SPIKES:
            with multiprocessing.get_context("fork").Pool(min(workers, len(tasks))) as pool:
                parts = pool.map(_fit_units_task, tasks, chunksize=1)
        else:
            parts = [_fit_units(*task) for task in tasks]
        rows = [row for part in parts for row in part]
    finally:
        _SESSION.clear()
    if not rows:
        return pd.DataFrame({c: pd.Series(dtype=object) for c in COLUMNS})
    table = pd.DataFrame(rows)[COLUMNS]
    n_bad = int((~table["converged"]).sum())
    if n_bad:
        log.info("%d of %d fits did not converge (see fit_note).", n_bad, len(table))
    return table


def run_session_recovery(*, session: str, spikes_path, output: str, settings: RecoverySettings,
                         span: tuple[float, float] | None = None, workers: int = 1) -> None:
    """Fit every unit of a session (over ``workers`` processes) and write ``recovery.parquet``
    atomically."""
    spikes = load_spikes(spikes_path, session=session)
    span = recording_span(spikes, span)
    table = recovery_table(spikes, span_s=span, settings=settings, workers=workers)
    table.insert(0, "session", session)
    write_parquet_atomic(frame_to_arrow(table), output,
                         metadata={"session": session, "settings": asdict(settings),
                                   "span_s": span})
    log.info("session %s: recovery fits for %d units written.", session, spikes.n_units)
