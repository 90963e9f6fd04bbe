"""Seeded, exact generators of spike trains with known statistics.

Used to build the demo cohort and, in the tests, as ground truth for every estimator.

Renewal models (``PoissonISI``, ``DeadTimeISI``, ``GammaISI``, ``ExpRecoveryISI``) draw
independent inter-spike intervals (ISIs) exactly: Poisson and dead time by the exponential
distribution, gamma by numpy's gamma sampler, exponential recovery by inverting its cumulative
hazard (``spikevar.recovery.hazard_models``). Trains are started a burn-in of many mean ISIs
before the recording so that they are (to numerical precision) stationary at time 0.

Time-varying rates use a rate-modulated renewal process: a stationary train is drawn in
"operational time" and mapped to real time through the inverse of the integrated rate, which keeps
the refractory shape of the ISI distribution while the mean rate follows ``rate(t)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from spikevar.recovery import hazard_models


@dataclass(frozen=True)
class PoissonISI:
    """Exponential ISIs: a homogeneous Poisson process of rate ``rate_hz``."""

    rate_hz: float

    @property
    def mean_isi_s(self) -> float:
        return 1.0 / self.rate_hz

    def draw(self, n: int, rng: np.random.Generator) -> np.ndarray:
        return rng.exponential(1.0 / self.rate_hz, size=n)


@dataclass(frozen=True)
class DeadTimeISI:
    """Poisson process with an absolute dead time: ISI = d + Exp(lambda).

    ``rate_hz`` is the output rate r; the free rate is ``lambda = r / (1 - r d)``.
    """

    rate_hz: float
    dead_time_s: float

    def __post_init__(self):
        if self.rate_hz * self.dead_time_s >= 1:
            raise ValueError("rate_hz * dead_time_s must be < 1")

    @property
    def free_rate_hz(self) -> float:
        return self.rate_hz / (1.0 - self.rate_hz * self.dead_time_s)

    @property
    def mean_isi_s(self) -> float:
        return 1.0 / self.rate_hz

    def draw(self, n: int, rng: np.random.Generator) -> np.ndarray:
        return self.dead_time_s + rng.exponential(1.0 / self.free_rate_hz, size=n)


@dataclass(frozen=True)
class GammaISI:
    """Gamma-distributed ISIs with shape ``shape`` and mean ``1 / rate_hz``."""

    rate_hz: float
    shape: float

    @property
    def mean_isi_s(self) -> float:
        return 1.0 / self.rate_hz

    def draw(self, n: int, rng: np.random.Generator) -> np.ndarray:
        return rng.gamma(self.shape, 1.0 / (self.shape * self.rate_hz), size=n)


@dataclass(frozen=True)
class ExpRecoveryISI:
    """ISIs of the exponential-recovery hazard ``r_inf (1 - exp(-(s - d) / tau))`` after ``d``."""

    asymptotic_rate_hz: float
    tau_s: float
    dead_time_s: float = 0.0

    @property
    def mean_isi_s(self) -> float:
        mean, _ = hazard_models.exp_recovery_moments(
            asymptotic_rate_hz=self.asymptotic_rate_hz, tau_s=self.tau_s,
            dead_time_s=self.dead_time_s)
        return mean

    def draw(self, n: int, rng: np.random.Generator) -> np.ndarray:
        # H(ISI) ~ Exp(1): draw the exponential and invert the cumulative hazard.
        y = rng.exponential(1.0, size=n)
        return hazard_models.exp_recovery_inverse_cumulative_hazard(
            y, asymptotic_rate_hz=self.asymptotic_rate_hz, tau_s=self.tau_s,
            dead_time_s=self.dead_time_s)


RenewalModel = PoissonISI | DeadTimeISI | GammaISI | ExpRecoveryISI


def renewal_train(
    model: RenewalModel,
    *,
    duration_s: float,
    rng: np.random.Generator,
    burn_in_isis: float = 30.0,
    mean_isi_s: float | None = None,
) -> np.ndarray:
    """Spike times in ``[0, duration_s)`` of a stationary renewal process.

    Parameters
    ----------
    model
        One of the renewal models of this module.
    duration_s
        Length of the recording.
    rng
        Seeded NumPy generator.
    burn_in_isis
        The train starts this many mean ISIs before 0, so the phase at 0 is stationary.
    mean_isi_s
        Pass the model's mean ISI when already known (saves a numerical integration).

    Notes
    -----
    ISIs are drawn in vectorised blocks sized from the expected count; a new block is only drawn
    if the first did not reach the end (rare), so there is no Python loop over spikes.
    """
    mean = model.mean_isi_s if mean_isi_s is None else mean_isi_s
    start = -burn_in_isis * mean
    total = duration_s - start
    expected = total / mean
    pieces, t_end = [], start
    while t_end < duration_s:
        n = int(expected * 1.05 + 6 * np.sqrt(expected) + 16)
        times = t_end + np.cumsum(model.draw(n, rng))
        pieces.append(times)
        t_end = times[-1]
        expected = (duration_s - t_end) / mean
    times = np.concatenate(pieces)
    return times[(times >= 0) & (times < duration_s)]


def poisson_train(*, rate_hz: float, duration_s: float, rng: np.random.Generator) -> np.ndarray:
    """Homogeneous Poisson process: a Poisson count, then sorted uniform times (exact)."""
    n = rng.poisson(rate_hz * duration_s)
    return np.sort(rng.uniform(0.0, duration_s, size=n))


def integrated_rate(grid_s: np.ndarray, rate_hz: np.ndarray) -> np.ndarray:
    """Cumulative integral of a piecewise-linear rate on ``grid_s`` (trapezoid rule, exact)."""
    increments = 0.5 * (rate_hz[1:] + rate_hz[:-1]) * np.diff(grid_s)
    return np.concatenate([[0.0], np.cumsum(increments)])


def modulated_renewal_train(
    model: RenewalModel,
    *,
    grid_s: np.ndarray,
    rate_hz: np.ndarray,
    rng: np.random.Generator,
) -> np.ndarray:
    """Rate-modulated renewal train whose mean rate follows ``rate_hz`` on ``grid_s``.

    A stationary train of ``model`` is drawn in operational time
    ``w(t) = mean_isi * integral_0^t rate`` and mapped back through the inverse of ``w``.
    With ``PoissonISI`` this is an exact inhomogeneous Poisson process.

    Notes
    -----
    ``rate_hz`` must be non-negative; stretches of zero rate produce no spikes.
    """
    rate_hz = np.asarray(rate_hz, dtype=float)
    if np.any(rate_hz < 0):
        raise ValueError("rate_hz must be >= 0")
    mean = model.mean_isi_s
    operational = integrated_rate(grid_s, rate_hz) * mean
    op_times = renewal_train(model, duration_s=operational[-1], rng=rng, mean_isi_s=mean)
    # operational is non-decreasing; keep strictly increasing knots for interpolation.
    keep = np.concatenate([[True], np.diff(operational) > 0])
    return np.interp(op_times, operational[keep], grid_s[keep]) + grid_s[0]


def event_locked_rate(
    grid_s: np.ndarray,
    *,
    event_times_s: np.ndarray,
    event_amplitudes_hz: np.ndarray,
    baseline_hz: float,
    gain_cv: float,
    rng: np.random.Generator,
    response_latency_s: float = 0.05,
    response_width_s: float = 0.15,
    driven_gain_cv: float | None = None,
    shared_gain: np.ndarray | None = None,
) -> np.ndarray:
    """Firing rate with event-locked responses and trial-to-trial gain variability.

    Between events the baseline is multiplied by a gain drawn once per inter-event stretch
    (gamma distributed, mean 1, coefficient of variation ``gain_cv``): slow, trial-to-trial
    fluctuations of excitability. After each event a smooth bump (raised cosine starting at
    ``response_latency_s`` and lasting ``2 * response_width_s``) of height
    ``event_amplitudes_hz[i]`` is added, scaled by a gain with CV ``driven_gain_cv`` (default
    ``gain_cv / 4``). Driven firing is thus less variable than spontaneous firing, so count
    variability relative to the mean drops after event onset.

    Notes
    -----
    For Poisson spiking and a window of mean count mu within one gain stretch, the count Fano
    factor is ``1 + gain_cv**2 * mu`` before the event (a doubly stochastic Poisson process).

    ``shared_gain``: one factor per inter-event stretch (``len(event_times_s) + 1``, in event
    order) that also multiplies the baseline, except while the event response lasts (the event
    quenches it). Giving several units the same array makes their counts covary before the
    event (shared variability) and much less during the response.
    """
    grid_s = np.asarray(grid_s, dtype=float)
    event_times_s = np.asarray(event_times_s, dtype=float)
    order = np.argsort(event_times_s)
    event_times_s = event_times_s[order]
    amplitudes = np.asarray(event_amplitudes_hz, dtype=float)[order]
    n_stretch = len(event_times_s) + 1

    def gamma_gain(cv, n):
        if cv <= 0:
            return np.ones(n)
        shape = 1.0 / cv**2
        return rng.gamma(shape, 1.0 / shape, size=n)

    # stretch i runs from event i-1 (shifted by half a second) to event i; gain changes there.
    boundaries = event_times_s + 0.5
    stretch = np.searchsorted(boundaries, grid_s, side="right")
    rate = baseline_hz * gamma_gain(gain_cv, n_stretch)[stretch]
    driven = gamma_gain(gain_cv / 4 if driven_gain_cv is None else driven_gain_cv,
                        len(event_times_s))
    # each grid point is affected by at most the most recent event (responses are short).
    last = np.searchsorted(event_times_s, grid_s, side="right") - 1
    has = last >= 0
    lag = np.where(has, grid_s - event_times_s[np.maximum(last, 0)], -1.0)
    phase = (lag - response_latency_s) / (2 * response_width_s)
    inside = (phase >= 0) & (phase <= 1)
    bump = np.where(inside, 0.5 * (1 - np.cos(2 * np.pi * phase)), 0.0)
    if shared_gain is not None:
        shared = np.asarray(shared_gain, dtype=float)
        if len(shared) != n_stretch:
            raise ValueError(f"shared_gain needs {n_stretch} values, one per stretch")
        rate = rate * np.where(has & inside, 1.0, shared[stretch])
    rate = rate + np.where(has, amplitudes[np.maximum(last, 0)] * driven[np.maximum(last, 0)],
                           0.0) * bump
    return rate


def multiplicative_recovery_trains(
    *,
    n_trains: int,
    duration_s: float,
    rate_grid_s: np.ndarray,
    rate_hz: np.ndarray,
    tau_s: float,
    dead_time_s: float,
    rng: np.random.Generator,
) -> list[np.ndarray]:
    """Exact trains of intensity ``lambda(t) = r(t) g(t - t_last)`` by thinning.

    ``g(u) = 1 - exp(-(u - d) / tau)`` for ``u > d`` and 0 before, ``r(t)`` given on a grid
    (linear interpolation). Candidates come from a Poisson process at ``max r`` and are accepted
    with probability ``r(t) g(t - t_last) / max r`` (Lewis & Shedler thinning). The history
    dependence makes the candidates of one train sequential, so the loop runs over candidate
    index and is vectorised across the ``n_trains`` independent trains (simulation only).
    """
    r_max = float(np.max(rate_hz))
    t = np.zeros(n_trains)
    last = np.full(n_trains, -np.inf)
    accepted_t, accepted_k = [], []
    active = np.ones(n_trains, dtype=bool)
    while active.any():
        t = t + rng.exponential(1.0 / r_max, size=n_trains)
        active = t < duration_s
        lag = t - last - dead_time_s
        g = np.where(lag > 0, -np.expm1(-np.maximum(lag, 0) / tau_s), 0.0)
        r = np.interp(t, rate_grid_s, rate_hz)
        accept = active & (rng.uniform(size=n_trains) * r_max < r * g)
        if accept.any():
            accepted_t.append(t[accept])
            accepted_k.append(np.flatnonzero(accept))
            last = np.where(accept, t, last)
    times = np.concatenate(accepted_t) if accepted_t else np.zeros(0)
    which = np.concatenate(accepted_k) if accepted_k else np.zeros(0, dtype=int)
    order = np.lexsort((times, which))
    times, which = times[order], which[order]
    bounds = np.searchsorted(which, np.arange(n_trains + 1))
    return [times[bounds[k]:bounds[k + 1]] for k in range(n_trains)]


def event_locked_population(
    *,
    n_units: int,
    event_times_s: np.ndarray,
    baseline_hz,
    amplitude_hz,
    gain_cv: float,
    driven_gain_cv: float,
    rng: np.random.Generator,
    dt_s: float = 1e-3,
) -> tuple[np.ndarray, np.ndarray]:
    """Poisson units with event-locked responses and trial-to-trial gain (see
    :func:`event_locked_rate`). ``baseline_hz`` and ``amplitude_hz`` are numbers or callables
    ``f(rng)`` drawn once per unit. Returns unit labels and spike times (unsorted by unit)."""
    events = np.asarray(event_times_s, dtype=float)
    grid = np.arange(0.0, events.max() + 3.0, dt_s)
    draw = lambda v: float(v(rng)) if callable(v) else float(v)  # noqa: E731
    units, times = [], []
    for u in range(n_units):
        rate = event_locked_rate(grid, event_times_s=events,
                                 event_amplitudes_hz=np.full(len(events), draw(amplitude_hz)),
                                 baseline_hz=draw(baseline_hz), gain_cv=gain_cv, rng=rng,
                                 driven_gain_cv=driven_gain_cv)
        t = modulated_renewal_train(PoissonISI(1.0), grid_s=grid, rate_hz=rate, rng=rng)
        units.append(np.full(len(t), f"u{u:03d}"))
        times.append(t)
    return np.concatenate(units), np.concatenate(times)
