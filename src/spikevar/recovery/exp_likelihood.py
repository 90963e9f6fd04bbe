"""The exp_recovery profile log-likelihood with its gradient and Hessian in closed form.

Notation (see :mod:`spikevar.recovery.fit`): ``u = s - d``, ``x = u / tau``, ``e = exp(-x)``,
``q = 1 - e`` (the recovery function ``g``), ``G = u - tau q`` (cumulative hazard per unit
rate), ``D = sum w G + w_c G(c)`` and ``L = sum log q``. With the rate profiled out the
log-likelihood is ``n log(n / D) + sum log w + L - n``. Derivatives used below (``a = e / q``)::

    G_tau = x e - q        G_d = -q
    G_tautau = e x^2 / tau   G_taud = e x / tau   G_dd = e / tau
    (log q)_tau = -a x / tau      (log q)_d = -a / tau
    (log q)_tautau = (2 a x - a (1 + a) x^2) / tau^2
    (log q)_taud = (a - a (1 + a) x) / tau^2
    (log q)_dd = -a (1 + a) / tau^2

Intervals more than 36 tau past ``d`` are fully recovered: their ``G = u - tau`` is summed from
prefix sums (linear in ``tau`` and ``d``, no curvature), so the cost scales with the short
intervals only. The sums run over the stand-in points of the intervals (``sum_x``/``sum_w``
for weighted sums, ``log_x``/``log_w`` for plain sums; see
:mod:`spikevar.recovery.interval_quadrature`).
"""

from __future__ import annotations

import numpy as np

#: beyond this many time constants the recovery is complete to double precision (exp(-36) < eps)
FAR = 36.0


def recovery_terms(iv, tau: float, d: float, *, second: bool = False):
    """``D`` and ``L`` with their first (and with ``second``, second) derivatives in
    ``(tau, d)``: returns ``(D, dD, L, dL)`` or ``(D, dD, d2D, L, dL, d2L)``, the first
    derivatives as ``(d/dtau, d/dd)`` and the second as ``(tautau, taud, dd)``."""
    cut = d + FAR * tau
    k = int(np.searchsorted(iv.sum_x, cut, side="left"))
    u = iv.sum_x[:k] - d
    w = iv.sum_w[:k]
    x = u / tau
    e = np.exp(-x)
    q = -np.expm1(-x)
    we = w * e
    # plain sums, not BLAS dot products: exact-order summation and no thread start-up per call
    D = float((w * (u - tau * q)).sum())
    wq = float((w * q).sum())
    wex = float((we * x).sum())
    dD = [wex - wq, -wq]
    if second:
        d2D = [float((we * x * x).sum()) / tau, wex / tau, float(we.sum()) / tau]
    if iv.log_x is not iv.sum_x:  # weighted intervals: the plain sums have points of their own
        kl = int(np.searchsorted(iv.log_x, cut, side="left"))
        x = (iv.log_x[:kl] - d) / tau
        e = np.exp(-x)
        q = -np.expm1(-x)
        wl = iv.log_w[:kl]
    else:
        wl = iv.log_w[:k]
    # intervals of denormal length (1e-300 s) overflow the curvature terms: the optimiser then
    # takes a gradient step (recovery.box_newton), so the warning says nothing
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        L = float((wl * np.log(q)).sum())
        a = e / q
        wa = wl * a
        sa = float(wa.sum())
        sax = float((wa * x).sum())
        dL = [-sax / tau, -sa / tau]
        if second:
            wab = wa * (1.0 + a)
            sabx = float((wab * x).sum())
            d2L = [(2.0 * sax - float((wab * x * x).sum())) / tau**2, (sa - sabx) / tau**2,
                   -float(wab.sum()) / tau**2]
    far_w = iv._cw[-1] - iv._cw[k]
    far_ws = iv._cws[-1] - iv._cws[k]
    D += far_ws - d * far_w - tau * far_w
    dD[0] -= far_w
    dD[1] -= far_w
    uc = iv.censored - d
    if uc > 0:
        wc = iv.censored_weight
        xc = uc / tau
        ec = np.exp(-xc)
        rec = -np.expm1(-xc)  # 1 - exp(-xc)
        D += wc * (uc - tau * rec)
        dD[0] += wc * (xc * ec - rec)
        dD[1] -= wc * rec
        if second:
            d2D[0] += wc * ec * xc * xc / tau
            d2D[1] += wc * ec * xc / tau
            d2D[2] += wc * ec / tau
    if second:
        return D, dD, d2D, L, dL, d2L
    return D, dD, L, dL


def profile_loglik(iv, tau: float, d: float) -> float:
    """Profile log-likelihood (rate maximised out) of exp_recovery at ``(tau, d)``."""
    D, _, L, _ = recovery_terms(iv, tau, d)
    if not np.isfinite(L) or D <= 0:
        return -np.inf
    return iv.n * np.log(iv.n / D) + iv.sum_log_w + L - iv.n


def objective(theta, iv):
    """Negative profile log-likelihood and its gradient in the optimiser's coordinates
    ``theta = (log tau, d / shortest interval)``."""
    tau, d = np.exp(theta[0]), theta[1] * iv.min_isi
    D, dD, L, dL = recovery_terms(iv, tau, d)
    if not np.isfinite(L) or D <= 0:
        return 1e300, np.zeros(2)
    ll = iv.n * np.log(iv.n / D) + iv.sum_log_w + L - iv.n
    g_tau = -iv.n / D * dD[0] + dL[0]
    g_d = -iv.n / D * dD[1] + dL[1]
    return -ll, -np.array([g_tau * tau, g_d * iv.min_isi])


def objective_with_hessian(theta, iv):
    """:func:`objective` with its Hessian in ``theta``: returns value, gradient, Hessian
    (value ``inf`` where the likelihood is zero)."""
    tau, d, m = np.exp(theta[0]), theta[1] * iv.min_isi, iv.min_isi
    D, dD, d2D, L, dL, d2L = recovery_terms(iv, tau, d, second=True)
    if not np.isfinite(L) or D <= 0:
        return np.inf, np.zeros(2), np.eye(2)
    n = iv.n
    ll = n * np.log(n / D) + iv.sum_log_w + L - n
    g_tau = -n / D * dD[0] + dL[0]
    g_d = -n / D * dD[1] + dL[1]
    h_tt = -n * (d2D[0] / D - dD[0] ** 2 / D**2) + d2L[0]
    h_td = -n * (d2D[1] / D - dD[0] * dD[1] / D**2) + d2L[1]
    h_dd = -n * (d2D[2] / D - dD[1] ** 2 / D**2) + d2L[2]
    grad = np.array([g_tau * tau, g_d * m])
    with np.errstate(invalid="ignore", over="ignore"):  # the same denormal intervals
        hess = np.array([[tau * tau * h_tt + tau * g_tau, tau * m * h_td],
                         [tau * m * h_td, m * m * h_dd]])
    return -ll, -grad, -hess
