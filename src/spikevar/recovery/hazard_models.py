"""Closed forms of the renewal models used by the simulator and by the recovery fits.

The exponential-recovery model has hazard (firing probability per unit time, ``s`` seconds after
the previous spike)::

    h(s) = r_inf * (1 - exp(-(s - d) / tau))   for s > d,   0 for s <= d

with asymptotic rate ``r_inf`` (Hz), recovery time constant ``tau`` (s) and dead time ``d`` (s).
With ``u = s - d`` the cumulative hazard is ``H(s) = r_inf * (u - tau * (1 - exp(-u / tau)))``,
the survival function ``S(s) = exp(-H(s))`` and the ISI density ``h(s) * S(s)``.
``tau = 0`` gives a Poisson process with dead time, ``tau = d = 0`` a Poisson process.
"""

from __future__ import annotations

import numpy as np
from scipy import special


def _u_and_g(s, tau, dead_time):
    """Return ``u = max(s - d, 0)`` and ``G = H / r_inf`` evaluated stably."""
    u = np.maximum(np.asarray(s, dtype=float) - dead_time, 0.0)
    if tau <= 0:
        return u, u
    x = u / tau
    # u - tau * (1 - exp(-x)) = tau * (x + expm1(-x)); the series keeps precision for small x.
    g = tau * (x + np.expm1(-x))
    small = np.flatnonzero(x < 1e-4)
    if small.size:
        xs = x[small] if np.ndim(x) else x
        g_small = tau * (xs**2 / 2 - xs**3 / 6 + xs**4 / 24)
        if np.ndim(g):
            g[small] = g_small
        else:
            g = g_small
    return u, g


def exp_recovery_cumulative_hazard(s, *, asymptotic_rate_hz, tau_s, dead_time_s=0.0):
    """Cumulative hazard ``H(s)`` of the exponential-recovery model (dimensionless).

    Notes
    -----
    ``H`` is 0 for ``s <= dead_time_s``. ``tau_s = 0`` gives the dead-time Poisson model
    ``r_inf * (s - d)``.
    """
    _, g = _u_and_g(s, tau_s, dead_time_s)
    return asymptotic_rate_hz * g


def exp_recovery_hazard(s, *, asymptotic_rate_hz, tau_s, dead_time_s=0.0):
    """Hazard ``h(s)`` in Hz of the exponential-recovery model."""
    u = np.maximum(np.asarray(s, dtype=float) - dead_time_s, 0.0)
    if tau_s <= 0:
        return np.where(u > 0, asymptotic_rate_hz, 0.0)
    return asymptotic_rate_hz * -np.expm1(-u / tau_s)


def exp_recovery_survival(s, *, asymptotic_rate_hz, tau_s, dead_time_s=0.0):
    """Survival function ``P(ISI > s) = exp(-H(s))``."""
    return np.exp(-exp_recovery_cumulative_hazard(
        s, asymptotic_rate_hz=asymptotic_rate_hz, tau_s=tau_s, dead_time_s=dead_time_s))


def exp_recovery_cdf(s, *, asymptotic_rate_hz, tau_s, dead_time_s=0.0):
    """ISI distribution function ``1 - exp(-H(s))``."""
    return -np.expm1(-exp_recovery_cumulative_hazard(
        s, asymptotic_rate_hz=asymptotic_rate_hz, tau_s=tau_s, dead_time_s=dead_time_s))


def exp_recovery_pdf(s, *, asymptotic_rate_hz, tau_s, dead_time_s=0.0):
    """ISI density ``h(s) * exp(-H(s))`` in 1/s."""
    kw = dict(asymptotic_rate_hz=asymptotic_rate_hz, tau_s=tau_s, dead_time_s=dead_time_s)
    return exp_recovery_hazard(s, **kw) * exp_recovery_survival(s, **kw)


#: the three nested models, as special cases of exponential recovery
MODELS = ("poisson", "dead_time", "exp_recovery")


def nested_parameters(model: str, *, tau_s, dead_time_s) -> tuple[float, float]:
    """``(tau, d)`` of a fitted model as exponential recovery: poisson has ``tau = d = 0``,
    dead_time ``tau = 0`` (their table rows hold NaN for parameters they do not have)."""
    if model == "poisson":
        return 0.0, 0.0
    if model == "dead_time":
        return 0.0, float(dead_time_s)
    if model == "exp_recovery":
        return float(tau_s), float(dead_time_s)
    raise ValueError(f"unknown model {model!r}; expected one of {MODELS}")


def model_cumulative_hazard(model: str, s, *, rate_hz, tau_s=np.nan, dead_time_s=0.0):
    """Cumulative hazard ``H(s)`` of any of the three models (the one implementation the fits'
    goodness of fit and the figures use)."""
    tau, d = nested_parameters(model, tau_s=tau_s, dead_time_s=dead_time_s)
    return exp_recovery_cumulative_hazard(s, asymptotic_rate_hz=rate_hz, tau_s=tau,
                                          dead_time_s=d)


def model_cdf(model: str, s, *, rate_hz, tau_s=np.nan, dead_time_s=0.0):
    """ISI distribution function ``1 - exp(-H(s))`` of any of the three models."""
    return -np.expm1(-model_cumulative_hazard(model, s, rate_hz=rate_hz, tau_s=tau_s,
                                              dead_time_s=dead_time_s))


def model_pdf(model: str, s, *, rate_hz, tau_s=np.nan, dead_time_s=0.0):
    """ISI density ``h(s) exp(-H(s))`` (1/s) of any of the three models."""
    tau, d = nested_parameters(model, tau_s=tau_s, dead_time_s=dead_time_s)
    return exp_recovery_pdf(s, asymptotic_rate_hz=rate_hz, tau_s=tau, dead_time_s=d)


def exp_recovery_moments(*, asymptotic_rate_hz, tau_s, dead_time_s=0.0):
    """Mean ISI (s) and ISI coefficient of variation by numerical integration of the survival.

    ``E[S] = int_0^inf S(s) ds`` and ``E[S^2] = 2 int_0^inf s S(s) ds``.

    Returns
    -------
    mean_s, cv : float
    """
    from scipy import integrate  # here, not at import: the fitting rules do not need it

    kw = dict(asymptotic_rate_hz=asymptotic_rate_hz, tau_s=tau_s, dead_time_s=0.0)
    # integrate over u = s - d, where the survival is 1 for s < d.
    upper = dead_time_s + tau_s + 60.0 / asymptotic_rate_hz
    m1_u, _ = integrate.quad(lambda u: exp_recovery_survival(u, **kw), 0, upper, limit=200)
    m2_u, _ = integrate.quad(lambda u: 2 * u * exp_recovery_survival(u, **kw), 0, upper, limit=200)
    d = dead_time_s
    mean = d + m1_u
    second = d**2 + 2 * d * m1_u + m2_u
    var = second - mean**2
    return mean, float(np.sqrt(var) / mean)


def exp_recovery_inverse_cumulative_hazard(y, *, asymptotic_rate_hz, tau_s, dead_time_s=0.0):
    """Solve ``H(s) = y`` for ``s`` (vectorised), the inverse used to draw ISIs exactly.

    Notes
    -----
    With ``x = u / tau`` and ``c = 1 + y / (r_inf * tau)``, ``H(s) = y`` reads
    ``x + exp(-x) = c`` whose positive root is ``x = c + W0(-exp(-c))`` (principal branch of the
    Lambert W function). Two Newton steps on ``H`` polish the result where the closed form loses
    precision (``c`` close to 1, i.e. tiny ``y``).
    """
    y = np.asarray(y, dtype=float)
    r, tau, d = asymptotic_rate_hz, tau_s, dead_time_s
    if tau <= 0:
        return d + y / r
    c = 1.0 + y / (r * tau)
    x = c + special.lambertw(-np.exp(-c), 0).real
    # small-y series: x^2/2 ~ y/(r tau)  ->  x ~ sqrt(2 y / (r tau))
    x = np.where(c - 1.0 < 1e-6, np.sqrt(2.0 * (c - 1.0)), x)
    u = np.maximum(x * tau, 0.0)
    for _ in range(2):
        _, g = _u_and_g(u, tau, 0.0)
        h = r * -np.expm1(-u / tau)
        step = np.where(h > 0, (r * g - y) / np.where(h > 0, h, 1.0), 0.0)
        u = np.maximum(u - step, 0.0)
    return d + u


def exp_recovery_mean_isi(asymptotic_rate_hz, *, tau_s, dead_time_s=0.0):
    """Mean ISI in closed form, vectorised over the rate: ``d + tau e^a a^-a gamma(a, a)``.

    ``a = r_inf tau`` and ``gamma`` is the lower incomplete gamma function (evaluated in logs so
    large ``a`` does not overflow). As ``tau -> 0`` it tends to ``d + 1 / r_inf``.
    """
    r = np.asarray(asymptotic_rate_hz, dtype=float)
    if tau_s <= 0:
        return dead_time_s + 1.0 / r
    a = r * tau_s
    log_mean_u = (np.log(tau_s) + a - a * np.log(a) + special.gammaln(a)
                  + np.log(special.gammainc(a, a)))
    return dead_time_s + np.exp(log_mean_u)


def exp_recovery_free_rate(output_rate_hz, *, tau_s, dead_time_s=0.0):
    """Invert :func:`exp_recovery_mean_isi`: the asymptotic rate giving a mean output rate.

    Output rates at or above the model's ceiling ``1 / d`` map to NaN.
    """
    rho = np.asarray(output_rate_hz, dtype=float)
    table_r = np.logspace(-3, 6, 2000)
    table_rho = 1.0 / exp_recovery_mean_isi(table_r, tau_s=tau_s, dead_time_s=dead_time_s)
    out = np.interp(np.log(rho), np.log(table_rho), np.log(table_r), left=np.nan, right=np.nan)
    return np.exp(out)
