"""Per-session refractory-recovery table: every unit, every model, with goodness of fit."""

from __future__ import annotations

import logging
from dataclasses import asdict

import numpy as np
import pandas as pd

from spikevar.base.parquet_io import frame_to_arrow, write_parquet_atomic
from spikevar.base.spike_arrays import SpikeArrays, load_spikes, recording_span
from spikevar.recovery.fit import (
    Fit,
    Intervals,
    fit_all,
    fit_exp_recovery_modulated,
    ks_uniform,
    rescaled_intervals,
)
from spikevar.recovery.settings import RecoverySettings

log = logging.getLogger(__name__)

COLUMNS = ["unit", "model", "fit_kind", "asymptotic_rate_hz", "recovery_tau_s", "dead_time_s",
           "tau_ci_lo", "tau_ci_hi", "log_likelihood", "aic", "ks_stat", "ks_pvalue",
           "ks_band_95", "n_intervals", "converged", "tau_at_bound", "preferred", "fit_note"]


def _row(unit: str, fit: Fit, iv: Intervals | None, kind: str) -> dict:
    if iv is not None and np.isfinite(fit.log_likelihood):
        ks, p = ks_uniform(rescaled_intervals(fit, iv))
    else:
        ks, p = np.nan, np.nan
    n = iv.n if iv is not None else 0
    return {"unit": unit, "model": fit.model, "fit_kind": kind,
            "asymptotic_rate_hz": fit.rate_hz, "recovery_tau_s": fit.tau_s,
            "dead_time_s": fit.dead_time_s, "tau_ci_lo": fit.tau_ci[0],
            "tau_ci_hi": fit.tau_ci[1], "log_likelihood": fit.log_likelihood,
            "aic": fit.aic, "ks_stat": ks, "ks_pvalue": p,
            "ks_band_95": 1.36 / np.sqrt(n) if n else np.nan, "n_intervals": n,
            "converged": bool(fit.converged), "tau_at_bound": fit.tau_at_bound,
            "preferred": False, "fit_note": fit.note}


def unit_recovery_rows(unit: str, times: np.ndarray, *, span_s: tuple[float, float],
                       settings: RecoverySettings) -> list[dict]:
    """All model rows for one unit (stationary fits, then the slow-rate-modulated fit).

    Notes
    -----
    The first interval (recording start to first spike) is dropped; the last (last spike to
    recording end) is right-censored. Fewer than ``min_intervals`` intervals, or all intervals
    equal, give rows of NaN with ``converged = False`` and the reason in ``fit_note``.
    ``preferred`` marks the stationary model with the lowest AIC among converged fits.
    """
    isi = np.diff(times)
    if len(isi) < settings.min_intervals or np.ptp(isi) == 0:
        note = (f"too few intervals ({len(isi)} < {settings.min_intervals})"
                if len(isi) < settings.min_intervals else "all intervals equal")
        kinds = [("stationary", m) for m in ("poisson", "dead_time", "exp_recovery")]
        if settings.modulated_fit:
            kinds.append(("slow_rate_modulated", "exp_recovery"))
        return [dict(_row(unit, Fit(m, note=note), None, k), n_intervals=len(isi))
                for k, m in kinds]
    iv = Intervals.build(isi, censored=span_s[1] - times[-1])
    fits = fit_all(iv, with_interval=settings.tau_interval)
    rows = [_row(unit, f, iv, "stationary") for f in fits]
    converged = [r for r in rows if r["converged"]]
    if converged:
        best = min(converged, key=lambda r: r["aic"])
        best["preferred"] = True
    if settings.modulated_fit:
        fit, weighted = fit_exp_recovery_modulated(
            times, span_s=span_s, bandwidth_s=settings.slow_rate_bandwidth_s,
            with_interval=settings.modulated_tau_interval)
        rows.append(_row(unit, fit, weighted, "slow_rate_modulated"))
    return rows


def recovery_table(spikes: SpikeArrays, *, span_s: tuple[float, float],
                   settings: RecoverySettings) -> pd.DataFrame:
    """Fit every unit of a session (a loop over units; each fit is vectorised over intervals)."""
    bounds = spikes.bounds()
    rows = []
    for k, unit in enumerate(spikes.labels):
        rows.extend(unit_recovery_rows(str(unit), spikes.times[bounds[k]:bounds[k + 1]],
                                       span_s=span_s, settings=settings))
    if not rows:
        return pd.DataFrame({c: pd.Series(dtype=object) for c in COLUMNS})
    table = pd.DataFrame(rows)[COLUMNS]
    n_bad = int((~table["converged"]).sum())
    if n_bad:
        log.info("%d of %d fits did not converge (see fit_note).", n_bad, len(table))
    return table


def run_session_recovery(*, session: str, spikes_path, output: str, settings: RecoverySettings,
                         duration_s: float | None = None) -> None:
    """Fit every unit of a session and write ``recovery.parquet`` atomically."""
    spikes = load_spikes(spikes_path, session=session)
    span = recording_span(spikes, duration_s)
    table = recovery_table(spikes, span_s=span, settings=settings)
    table.insert(0, "session", session)
    write_parquet_atomic(frame_to_arrow(table), output,
                         metadata={"session": session, "settings": asdict(settings),
                                   "span_s": span})
    log.info("session %s: recovery fits for %d units written.", session, spikes.n_units)
