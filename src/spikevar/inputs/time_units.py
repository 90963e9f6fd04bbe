"""Conversion of raw time stamps to seconds, and a plausibility check of the declared unit."""

from __future__ import annotations

import numpy as np

from spikevar.base.errors import SpikevarInputError

SECONDS_PER_UNIT = {"s": 1.0, "ms": 1e-3, "us": 1e-6}
TIME_UNITS = ("s", "ms", "us", "samples")

#: A recording that would last longer than this is taken as a wrong time unit (common practice:
#: single continuous extracellular sessions last minutes to hours, not days).
MAX_PLAUSIBLE_SPAN_S = 2 * 24 * 3600.0
#: A median within-unit ISI below this is taken as a wrong time unit: it is far below any
#: refractory period (absolute refractory periods are about 1-2 ms; common practice).
MIN_PLAUSIBLE_MEDIAN_ISI_S = 50e-6


def seconds_per_tick(time_unit: str, sampling_rate_hz: float | None) -> float:
    """Seconds represented by one unit of the raw time column.

    Raises
    ------
    SpikevarInputError
        Unknown unit, or ``samples`` without a positive sampling rate.
    """
    if time_unit == "samples":
        if sampling_rate_hz is None or not np.isfinite(sampling_rate_hz) or sampling_rate_hz <= 0:
            raise SpikevarInputError(
                "Times are declared in samples but no valid sampling rate is given.",
                fix="add a positive 'sampling_rate_hz' for this session in the sessions sheet, "
                "or set 'sampling_rate_hz' in the config.",
                where="column sampling_rate_hz")
        return 1.0 / float(sampling_rate_hz)
    if time_unit not in SECONDS_PER_UNIT:
        raise SpikevarInputError(
            f"Unknown time unit '{time_unit}'.",
            fix=f"use one of {', '.join(TIME_UNITS)}.", where="column time_unit")
    return SECONDS_PER_UNIT[time_unit]


def to_seconds(raw: np.ndarray, *, time_unit: str, sampling_rate_hz: float | None = None):
    """Convert raw time stamps to float64 seconds.

    Sample indices are divided by the sampling rate (``t = n / fs``), so sample 0 is time 0.
    """
    factor = seconds_per_tick(time_unit, sampling_rate_hz)
    raw = np.asarray(raw, dtype=np.float64)
    if time_unit == "samples":
        return raw / float(sampling_rate_hz)
    return raw if factor == 1.0 else raw * factor


def median_isi_from_diffs(d_unit: np.ndarray, d_time: np.ndarray,
                          max_samples: int = 1_000_000) -> float:
    """Median within-unit ISI from precomputed neighbour differences (unit codes, times).

    Long recordings use an evenly spaced subsample of the intervals, plenty for a plausibility
    check.
    """
    step = max(1, len(d_time) // max_samples)
    d_unit, d_time = d_unit[::step], d_time[::step]
    isi = d_time[(d_unit == 0) & (d_time > 0)]
    return float(np.median(isi)) if len(isi) else float("nan")


def check_plausible_unit(*, span_s: float, median_isi_s: float, time_unit: str) -> None:
    """Refuse a declared time unit that makes the data implausible, suggesting a better one.

    Parameters
    ----------
    span_s
        Largest spike time in seconds after conversion (the recording must be at least that long).
    median_isi_s
        Median within-unit ISI in seconds (NaN if unknown).
    time_unit
        The declared unit.

    Raises
    ------
    SpikevarInputError
        When the recording would last more than two days or the median ISI is below 50 us.
    """
    too_long = np.isfinite(span_s) and span_s > MAX_PLAUSIBLE_SPAN_S
    too_fast = np.isfinite(median_isi_s) and median_isi_s < MIN_PLAUSIBLE_MEDIAN_ISI_S
    if not (too_long or too_fast):
        return
    factor = 1.0 if time_unit == "samples" else SECONDS_PER_UNIT[time_unit]
    suggestion = None
    for candidate, c_factor in SECONDS_PER_UNIT.items():
        if candidate == time_unit:
            continue
        scale = c_factor / factor
        ok_span = not np.isfinite(span_s) or span_s * scale <= MAX_PLAUSIBLE_SPAN_S
        ok_isi = not np.isfinite(median_isi_s) or median_isi_s * scale >= MIN_PLAUSIBLE_MEDIAN_ISI_S
        if ok_span and ok_isi:
            suggestion = candidate
            break
    if too_long:
        problem = (f"With times declared in '{time_unit}' the recording would last "
                   f"{span_s / 86400:.1f} days, which is implausible.")
    else:
        problem = (f"With times declared in '{time_unit}' the median inter-spike interval is "
                   f"{median_isi_s * 1e6:.3g} us, below any refractory period.")
    if time_unit == "samples":
        fix = "check 'sampling_rate_hz' for this session (is it in Hz?)."
    elif suggestion is not None:
        fix = (f"the times look like they are in '{suggestion}': set time_unit to "
               f"'{suggestion}' for this session in the sheet (or in the config).")
    else:
        fix = "check the time column and the declared time_unit."
    raise SpikevarInputError(problem, fix=fix, where="column time_unit")
