"""Newton's method for a smooth function of a few variables inside a box.

The recovery fits minimise a negative log-likelihood of two variables with simple bounds; its
gradient and Hessian are known in closed form, so Newton steps converge in a handful of
evaluations where a quasi-Newton method needs dozens (and each call through a general
optimiser costs more than the arithmetic). This is the projected Newton method of
Bertsekas (1982, SIAM J Control Optim 20:221): variables held at a bound by the gradient are
fixed for the step, the Newton step is taken in the others, and the step is cut back along the
projection onto the box until the decrease is sufficient (Armijo's rule). A Hessian that is not
positive definite on the free variables is shifted until it is (the Levenberg-Marquardt
modification), so every step goes downhill.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: a variable this close to a bound (relative to the box's width) counts as being at it
AT_BOUND = 1e-12
#: the same for an open upper bound, which steps approach geometrically and never reach
AT_OPEN_BOUND = 1e-8
#: Armijo's sufficient-decrease constant
ARMIJO = 1e-4
#: relative size of the rounding in a value (sums of thousands of terms)
ROUNDING = 1e-13
#: a Newton step shorter than this (in every variable) ends the search
STEP_TOL = 1e-11
#: a step goes at most this share of the way to an open upper bound
FRACTION_TO_BOUNDARY = 0.9


@dataclass
class BoxResult:
    """Where the minimisation stopped and why."""

    x: np.ndarray
    fun: float
    grad: np.ndarray
    projected_grad: np.ndarray
    success: bool
    message: str
    evaluations: int


def projected_gradient(x, grad, lower, upper, open_upper=None) -> np.ndarray:
    """The gradient with the components that push out of the box at an active bound set to 0
    (an open upper bound counts as reached within ``AT_OPEN_BOUND`` of the box's width)."""
    width = np.maximum(upper - lower, 1.0)
    near = AT_BOUND if open_upper is None else np.where(open_upper, AT_OPEN_BOUND, AT_BOUND)
    at_lo = (x <= lower + AT_BOUND * width) & (grad > 0)
    at_hi = (x >= upper - near * width) & (grad < 0)
    return np.where(at_lo | at_hi, 0.0, grad)


def _newton_step(grad, hess, free) -> np.ndarray:
    """Newton step on the free variables, the Hessian shifted to be positive definite
    (closed forms for one and two free variables, the only sizes used)."""
    step = np.zeros_like(grad)
    idx = np.flatnonzero(free)
    if len(idx) == 1:
        i = idx[0]
        h, g = float(hess[i, i]), float(grad[i])
        step[i] = -g / (h if h > 0 else abs(h) + 1.0)  # negative curvature: a damped step
        return step
    if len(idx) == 2:
        # in the variables scaled to unit curvature (Jacobi scaling) the test for a positive
        # definite Hessian and the shift do not depend on how differently the two variables
        # are scaled (here: curvatures 1e9 apart when d nears the shortest interval)
        root_a = np.sqrt(max(abs(float(hess[0, 0])), 1e-300))
        root_c = np.sqrt(max(abs(float(hess[1, 1])), 1e-300))
        a, c = float(hess[0, 0]) / root_a**2, float(hess[1, 1]) / root_c**2
        b = float(hess[0, 1]) / (root_a * root_c)
        g0, g1 = float(grad[0]) / root_a, float(grad[1]) / root_c
        mean, half = 0.5 * (a + c), float(np.hypot(0.5 * (a - c), b))
        low, scale = mean - half, abs(mean) + half
        shift = 0.0 if low > 1e-10 * scale else 1e-6 * max(scale, 1e-300) - low
        a, c = a + shift, c + shift
        det = a * c - b * b
        step[0] = -(c * g0 - b * g1) / det / root_a
        step[1] = -(a * g1 - b * g0) / det / root_c
        return step
    if len(idx):
        raise ValueError("minimise_in_box handles one or two variables")
    return step


def _towards_open_bounds(x, step, upper, open_upper):
    """Shorten ``step`` so no variable with an open upper bound goes more than
    ``FRACTION_TO_BOUNDARY`` of the way there (the value is singular at that bound, and a
    step clipped onto it would leave Newton's method creeping back from it)."""
    if open_upper is None:
        return step
    room = FRACTION_TO_BOUNDARY * (upper - x)
    over = open_upper & (step > room)
    if not over.any():
        return step
    return step * float(np.min(room[over] / step[over]))


def minimise_in_box(fun, x0, lower, upper, *, gtol: float = 1e-8, max_iterations: int = 100,
                    open_upper=None) -> BoxResult:
    """Minimise ``fun`` (returning value, gradient and Hessian) over ``lower <= x <= upper``.

    ``open_upper``: per variable, True where the value grows without bound towards the upper
    bound (the bound only keeps the arithmetic finite); steps stay clear of such bounds.
    Stops with success when the projected gradient's largest component is below ``gtol``, or
    when the Newton step is shorter than ``STEP_TOL`` in every variable.
    A start or trial point where ``fun`` is not finite is treated as too far (the step is cut).
    """
    lower = np.asarray(lower, dtype=float)
    upper = np.asarray(upper, dtype=float)
    open_upper = None if open_upper is None else np.asarray(open_upper, dtype=bool)
    x = np.clip(np.asarray(x0, dtype=float), lower, upper)
    f, g, h = fun(x)
    evaluations = 1
    if not np.isfinite(f):
        return BoxResult(x, f, g, g, False, "not finite at the start", evaluations)
    message, success = "iteration limit reached", False
    for _ in range(max_iterations):
        pg = projected_gradient(x, g, lower, upper, open_upper)
        if np.max(np.abs(pg)) < gtol:
            message, success = "projected gradient below tolerance", True
            break
        step = _newton_step(g, h, pg != 0)
        # not downhill cannot happen with a positive-definite shift (guards rounding); not
        # finite where the curvature overflowed (intervals of denormal length)
        if not np.all(np.isfinite(step)) or float(g @ step) >= 0:
            step = -pg
        step = _towards_open_bounds(x, step, upper, open_upper)
        if np.max(np.abs(np.clip(x + step, lower, upper) - x)) < STEP_TOL:
            message, success = "step below resolution", True
            break
        alpha, accepted = 1.0, False
        while alpha > 1e-12:
            trial = np.clip(x + alpha * step, lower, upper)
            f_new, g_new, h_new = fun(trial)
            evaluations += 1
            if np.isfinite(f_new) and (
                    f_new <= f + ARMIJO * float(g @ (trial - x))
                    # at the top the change in value is rounding: a full step that shrinks
                    # the gradient is progress
                    or (alpha == 1.0 and f_new <= f + ROUNDING * abs(f)
                        and np.max(np.abs(projected_gradient(trial, g_new, lower, upper,
                                                             open_upper)))
                        < np.max(np.abs(pg)))):
                accepted = True
                break
            alpha *= 0.5
        if not accepted:
            message = "no decrease along the step"
            success = bool(np.max(np.abs(pg)) < np.sqrt(gtol))
            break
        x, f, g, h = trial, f_new, g_new, h_new
    pg = projected_gradient(x, g, lower, upper, open_upper)
    return BoxResult(x, float(f), g, pg, success, message, evaluations)


@dataclass
class BoxResults:
    """Where each of many minimisations stopped and why (one row per problem)."""

    x: np.ndarray
    fun: np.ndarray
    grad: np.ndarray
    projected_grad: np.ndarray
    success: np.ndarray
    message: np.ndarray
    evaluations: np.ndarray


def _newton_steps(grad, hess, free) -> np.ndarray:
    """:func:`_newton_step` for many problems of one or two variables: rows of ``grad``
    ``(m, p)``, ``hess`` ``(m, p, p)`` and ``free`` ``(m, p)``."""
    m, p = grad.shape
    diag = np.diagonal(hess, axis1=1, axis2=2)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        single = -grad / np.where(diag > 0, diag, np.abs(diag) + 1.0)
    step = np.where(free, single, 0.0)
    if p == 1:
        return step
    if p != 2:
        raise ValueError("minimise_in_boxes handles one or two variables")
    both = free.all(axis=1)
    if not both.any():
        return step
    h, g = hess[both], grad[both]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        root_a = np.sqrt(np.maximum(np.abs(h[:, 0, 0]), 1e-300))
        root_c = np.sqrt(np.maximum(np.abs(h[:, 1, 1]), 1e-300))
        a, c = h[:, 0, 0] / root_a**2, h[:, 1, 1] / root_c**2
        b = h[:, 0, 1] / (root_a * root_c)
        g0, g1 = g[:, 0] / root_a, g[:, 1] / root_c
        mean, half = 0.5 * (a + c), np.hypot(0.5 * (a - c), b)
        low, scale = mean - half, np.abs(mean) + half
        shift = np.where(low > 1e-10 * scale, 0.0, 1e-6 * np.maximum(scale, 1e-300) - low)
        a, c = a + shift, c + shift
        det = a * c - b * b
        step[both] = np.stack([-(c * g0 - b * g1) / det / root_a,
                               -(a * g1 - b * g0) / det / root_c], axis=1)
    return step


def _towards_open_bounds_many(x, step, upper, open_upper):
    """:func:`_towards_open_bounds` row by row."""
    if open_upper is None:
        return step
    room = FRACTION_TO_BOUNDARY * (upper - x)
    over = open_upper[None, :] & (step > room)
    with np.errstate(divide="ignore", invalid="ignore"):
        shrink = np.where(over, room / np.where(over, step, 1.0), np.inf).min(axis=1)
    any_over = over.any(axis=1)
    return np.where(any_over[:, None], step * np.where(any_over, shrink, 1.0)[:, None], step)


def _max_abs(values):
    return np.max(np.abs(values), axis=1) if values.shape[1] else np.zeros(len(values))


def minimise_in_boxes(fun, x0, lower, upper, *, gtol: float = 1e-8, max_iterations: int = 100,
                      open_upper=None) -> BoxResults:
    """:func:`minimise_in_box` for many independent problems at once, step for step.

    ``fun(x, which)``: values ``(m,)``, gradients ``(m, p)`` and Hessians ``(m, p, p)`` of
    problems ``which`` (indices into the rows of ``x0``) at the rows of ``x`` ``(m, p)``.
    ``x0``, ``lower`` and ``upper``: ``(k, p)``; ``open_upper``: ``(p,)``, the same for every
    problem. Every problem takes the steps, step cuts and stops :func:`minimise_in_box` would
    take for it alone; each pass evaluates only the problems still searching.
    """
    lower = np.asarray(lower, dtype=float)
    upper = np.asarray(upper, dtype=float)
    open_upper = None if open_upper is None else np.asarray(open_upper, dtype=bool)
    x = np.clip(np.asarray(x0, dtype=float), lower, upper)
    k = len(x)
    f, g, h = fun(x, np.arange(k))
    evaluations = np.ones(k, dtype=np.int64)
    success = np.zeros(k, dtype=bool)
    message = np.full(k, "iteration limit reached", dtype=object)
    bad_start = ~np.isfinite(f)
    message[bad_start] = "not finite at the start"
    searching = np.flatnonzero(~bad_start)

    def pgrad(rows, xs, gs):
        return projected_gradient(xs, gs, lower[rows], upper[rows], open_upper)

    for _ in range(max_iterations):
        if len(searching) == 0:
            break
        s = searching
        pg = pgrad(s, x[s], g[s])
        pg_max = _max_abs(pg)
        done = pg_max < gtol
        message[s[done]], success[s[done]] = "projected gradient below tolerance", True
        s, pg, pg_max = s[~done], pg[~done], pg_max[~done]
        step = _newton_steps(g[s], h[s], pg != 0)
        downhill = np.einsum("ij,ij->i", g[s], step)
        with np.errstate(invalid="ignore"):
            fallback = ~np.all(np.isfinite(step), axis=1) | ~(downhill < 0)
        step = np.where(fallback[:, None], -pg, step)
        step = _towards_open_bounds_many(x[s], step, upper[s], open_upper)
        tiny = _max_abs(np.clip(x[s] + step, lower[s], upper[s]) - x[s]) < STEP_TOL
        message[s[tiny]], success[s[tiny]] = "step below resolution", True
        keep = ~tiny
        s, pg_max, step = s[keep], pg_max[keep], step[keep]
        # backtracking line search, all problems of this pass together
        alpha = np.ones(len(s))
        pending = np.arange(len(s))
        accepted = np.zeros(len(s), dtype=bool)
        while len(pending):
            rows = s[pending]
            trial = np.clip(x[rows] + alpha[pending, None] * step[pending], lower[rows],
                            upper[rows])
            f_new, g_new, h_new = fun(trial, rows)
            evaluations[rows] += 1
            f_old = f[rows]
            with np.errstate(invalid="ignore"):
                armijo = f_new <= f_old + ARMIJO * np.einsum("ij,ij->i", g[rows], trial - x[rows])
                top = ((alpha[pending] == 1.0) & (f_new <= f_old + ROUNDING * np.abs(f_old))
                       & (_max_abs(pgrad(rows, trial, g_new)) < pg_max[pending]))
            ok = np.isfinite(f_new) & (armijo | top)
            good = pending[ok]
            x[s[good]], f[s[good]] = trial[ok], f_new[ok]
            g[s[good]], h[s[good]] = g_new[ok], h_new[ok]
            accepted[good] = True
            pending = pending[~ok]
            alpha[pending] *= 0.5
            pending = pending[alpha[pending] > 1e-12]
        failed = ~accepted
        rows = s[failed]
        message[rows] = "no decrease along the step"
        success[rows] = pg_max[failed] < np.sqrt(gtol)
        searching = s[accepted]
    pg = projected_gradient(x, g, lower, upper, open_upper)
    return BoxResults(x, f.astype(float), g, pg, success, message, evaluations)
