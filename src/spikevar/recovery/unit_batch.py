"""The exp_recovery likelihood of many units at once: their intervals packed end to end.

A session's units are fitted together: every Newton step of every unit is one pass of array
arithmetic over the stand-in points of all units still being fitted, and each unit's sums are
segment sums (``np.bincount`` with weights). The formulas are those of
:mod:`spikevar.recovery.exp_likelihood` (one unit at a time), point for point, including the
split at ``FAR`` time constants past the dead time beyond which an interval is fully
recovered and enters through prefix sums; only the order of summation differs (rounding).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from spikevar.recovery.exp_likelihood import FAR


def _offsets(lengths) -> np.ndarray:
    return np.concatenate([[0], np.cumsum(lengths)]).astype(np.int64)


def _count_below(values: np.ndarray, offsets: np.ndarray, which: np.ndarray,
                 cut: np.ndarray) -> np.ndarray:
    """Per unit ``which[j]``, how many of its (ascending) packed ``values`` are below
    ``cut[j]``: ``np.searchsorted(..., side="left")`` in every segment at once (bisection)."""
    lo, hi = offsets[which].copy(), offsets[which + 1].copy()
    start = lo.copy()
    last = max(len(values) - 1, 0)
    while True:
        open_ = lo < hi
        if not open_.any():
            break
        mid = (lo + hi) // 2
        below = values[np.minimum(mid, last)] < cut
        lo = np.where(open_ & below, mid + 1, lo)
        hi = np.where(open_ & ~below, mid, hi)
    return lo - start


def _gather(offsets: np.ndarray, which: np.ndarray, lengths: np.ndarray):
    """Indices of the first ``lengths[j]`` packed entries of each unit ``which[j]`` (in that
    order) and, per entry, its position ``j``."""
    total = int(lengths.sum())
    slot = np.repeat(np.arange(len(which)), lengths)
    starts = np.repeat(offsets[which] - _offsets(lengths)[:-1], lengths)
    return starts + np.arange(total), slot


@dataclass
class IntervalBatch:
    """Many units' :class:`spikevar.recovery.fit.Intervals`, packed end to end.

    ``sum_*`` and ``log_*``: the stand-in points of the weighted and the plain sums, with
    ``sum_off`` / ``log_off`` the (units + 1) offsets; ``cw`` / ``cws``: each unit's prefix
    sums of weights and weight x point (each starting at 0), offsets ``c_off``.
    """

    sum_x: np.ndarray
    sum_w: np.ndarray
    sum_off: np.ndarray
    log_x: np.ndarray
    log_w: np.ndarray
    log_off: np.ndarray
    cw: np.ndarray
    cws: np.ndarray
    c_off: np.ndarray
    n: np.ndarray
    min_isi: np.ndarray
    mean_isi: np.ndarray
    sum_log_w: np.ndarray
    censored: np.ndarray
    censored_weight: np.ndarray
    #: every unit's plain sums run over the points of its weighted sums (no weights)
    same_points: bool = False

    @classmethod
    def of(cls, ivs: list) -> IntervalBatch:
        def cat(name):
            parts = [getattr(iv, name) for iv in ivs]
            return np.concatenate(parts) if parts else np.zeros(0)

        def scalars(name):
            return np.array([float(getattr(iv, name)) for iv in ivs], dtype=float)

        return cls(sum_x=cat("sum_x"), sum_w=cat("sum_w"),
                   sum_off=_offsets([len(iv.sum_x) for iv in ivs]),
                   log_x=cat("log_x"), log_w=cat("log_w"),
                   log_off=_offsets([len(iv.log_x) for iv in ivs]),
                   cw=cat("_cw"), cws=cat("_cws"), c_off=_offsets([len(iv._cw) for iv in ivs]),
                   n=scalars("n"), min_isi=scalars("min_isi"), mean_isi=scalars("mean_isi"),
                   sum_log_w=scalars("sum_log_w"), censored=scalars("censored"),
                   censored_weight=scalars("censored_weight"),
                   same_points=all(iv.log_x is iv.sum_x for iv in ivs))

    @property
    def n_units(self) -> int:
        return len(self.n)


def recovery_terms(batch: IntervalBatch, which: np.ndarray, tau: np.ndarray, d: np.ndarray, *,
                   second: bool = False, first: bool = True):
    """``D``, ``L`` and their derivatives for units ``which`` at their ``(tau, d)``, as
    :func:`spikevar.recovery.exp_likelihood.recovery_terms` gives them for one unit: arrays
    ``D (m,)``, ``dD (2, m)``, ``L (m,)``, ``dL (2, m)`` (and ``d2D``, ``d2L`` (3, m) with
    ``second``), returned in the same order; without ``first`` only ``D`` and ``L``."""
    m = len(which)
    cut = d + FAR * tau
    # the points short of the cut are a leading run of each unit's ascending points
    n_near = _count_below(batch.sum_x, batch.sum_off, which, cut)
    idx, slot = _gather(batch.sum_off, which, n_near)
    tau_p = tau[slot]
    u = batch.sum_x[idx] - d[slot]
    w = batch.sum_w[idx]
    x = u / tau_p
    minus_x = -x
    e = np.exp(minus_x)
    q = -np.expm1(minus_x)

    def seg(values):
        return np.bincount(slot, weights=values, minlength=m)

    D = seg(w * (u - tau_p * q))
    if first:
        we = w * e
        wq = seg(w * q)
        wex = seg(we * x)
        dD = np.stack([wex - wq, -wq])
    if second:
        d2D = np.stack([seg(we * x * x) / tau, wex / tau, seg(we) / tau])
    if batch.same_points:  # unweighted intervals: the plain sums reuse the same points
        wl = batch.log_w[idx]
    else:
        idx, slot = _gather(batch.log_off, which,
                            _count_below(batch.log_x, batch.log_off, which, cut))
        x = (batch.log_x[idx] - d[slot]) / tau[slot]
        e = np.exp(-x)
        q = -np.expm1(-x)
        wl = batch.log_w[idx]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        L = seg(wl * np.log(q))
        if first:
            a = e / q
            wa = wl * a
            sa = seg(wa)
            sax = seg(wa * x)
            dL = np.stack([-sax / tau, -sa / tau])
        if second:
            wab = wa * (1.0 + a)
            sabx = seg(wab * x)
            d2L = np.stack([(2.0 * sax - seg(wab * x * x)) / tau**2, (sa - sabx) / tau**2,
                            -seg(wab) / tau**2])
    start, end = batch.c_off[which], batch.c_off[which + 1] - 1
    far_w = batch.cw[end] - batch.cw[start + n_near]
    far_ws = batch.cws[end] - batch.cws[start + n_near]
    D = D + far_ws - d * far_w - tau * far_w
    uc = batch.censored[which] - d
    wc = np.where(uc > 0, batch.censored_weight[which], 0.0)
    uc = np.maximum(uc, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        xc = uc / tau
    ec = np.exp(-xc)
    rec = -np.expm1(-xc)
    D = D + wc * (uc - tau * rec)
    if not first:
        return D, L
    dD = dD - far_w + np.stack([wc * (xc * ec - rec), -wc * rec])
    if second:
        d2D = d2D + np.stack([wc * ec * xc * xc / tau, wc * ec * xc / tau, wc * ec / tau])
        return D, dD, d2D, L, dL, d2L
    return D, dD, L, dL


def profile_values(theta: np.ndarray, batch: IntervalBatch, which: np.ndarray) -> np.ndarray:
    """Negative profile log-likelihood per row of ``theta`` (``1e300`` where it is zero): the
    value of :func:`spikevar.recovery.exp_likelihood.objective` for each unit."""
    tau, d = np.exp(theta[:, 0]), theta[:, 1] * batch.min_isi[which]
    D, L = recovery_terms(batch, which, tau, d, first=False)
    ll = _loglik(batch, which, D, L)
    return np.where(np.isfinite(ll), -ll, 1e300)


def _loglik(batch, which, D, L):
    n = batch.n[which]
    with np.errstate(divide="ignore", invalid="ignore"):
        ll = n * np.log(n / D) + batch.sum_log_w[which] + L - n
    return np.where(np.isfinite(L) & (D > 0), ll, np.nan)


def objective_with_hessian(theta: np.ndarray, batch: IntervalBatch, which: np.ndarray):
    """Negative profile log-likelihood, gradient and Hessian in ``theta = (log tau,
    d / shortest interval)`` per row, as
    :func:`spikevar.recovery.exp_likelihood.objective_with_hessian` gives them for each unit:
    values ``(m,)`` (``inf`` where the likelihood is zero, with a zero gradient and the
    identity), gradients ``(m, 2)``, Hessians ``(m, 2, 2)``."""
    m_isi = batch.min_isi[which]
    tau, d = np.exp(theta[:, 0]), theta[:, 1] * m_isi
    D, dD, d2D, L, dL, d2L = recovery_terms(batch, which, tau, d, second=True)
    ll = _loglik(batch, which, D, L)
    n = batch.n[which]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        g_tau = -n / D * dD[0] + dL[0]
        g_d = -n / D * dD[1] + dL[1]
        h_tt = -n * (d2D[0] / D - dD[0] ** 2 / D**2) + d2L[0]
        h_td = -n * (d2D[1] / D - dD[0] * dD[1] / D**2) + d2L[1]
        h_dd = -n * (d2D[2] / D - dD[1] ** 2 / D**2) + d2L[2]
        hess = np.empty((len(which), 2, 2))
        hess[:, 0, 0] = tau * tau * h_tt + tau * g_tau
        hess[:, 0, 1] = hess[:, 1, 0] = tau * m_isi * h_td
        hess[:, 1, 1] = m_isi * m_isi * h_dd
    grad = np.stack([g_tau * tau, g_d * m_isi], axis=1)
    ok = np.isfinite(ll)
    value = np.where(ok, -ll, np.inf)
    grad = np.where(ok[:, None], -grad, 0.0)
    hess = np.where(ok[:, None, None], -hess, np.eye(2)[None])
    return value, grad, hess
