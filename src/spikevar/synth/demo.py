"""Build the synthetic demo cohort: an invented scenario, every number simulated.

SYNTHETIC DATA. The "Brackenfold flash cohort" does not exist: six fictional mice (two groups,
``standard`` and ``enriched`` housing), two sessions each, twenty units per session, shown
``dim`` and ``bright`` light flashes. Each unit is a rate-modulated renewal process from
:mod:`spikevar.synth.simulate` (exponential-recovery, gamma or dead-time intervals) with
flash-locked responses and trial-to-trial gain variability. In the ``standard`` group the units
of a session also share one fluctuating gain between flashes that each flash quenches while its
response lasts, so shared variability (noise correlations, percent shared) drops at flash onset;
in the ``enriched`` group that shared gain is weak. Sessions are written in mixed formats
and time units (CSV in s, gzipped TSV in ms, Parquet in s, a folder of NumPy arrays of sample
indices at 30 kHz with a unit label table, as a spike sorter exports them, and NWB) so the
demo exercises every reader.

Run ``python -m spikevar.synth.demo --out demo/cohort``.
"""

from __future__ import annotations

import argparse
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pandas as pd

from spikevar.synth import simulate

SUBJECTS = {
    "fen": "standard", "moss": "standard", "wren": "standard",
    "ash": "enriched", "sorrel": "enriched", "tansy": "enriched",
}
FORMATS = ("csv_s", "tsvgz_ms", "parquet_s", "npy_samples", "nwb")
SAMPLING_RATE_HZ = 30_000.0
CONDITIONS = {"dim": 12.0, "bright": 30.0}  # added peak rate of the flash response, Hz
#: CV of the gain the units of one session share between flashes, per group (by design)
SHARED_GAIN_CV = {"standard": 0.45, "enriched": 0.12}


@dataclass(frozen=True)
class DemoSize:
    """Size of the demo: small enough to run in about a minute on a laptop."""

    sessions_per_subject: int = 2
    units_per_session: int = 20
    duration_s: float = 240.0
    mean_trial_interval_s: float = 3.0


def _unit_model(rng: np.random.Generator, group: str):
    """Draw one unit's renewal model; the enriched group recovers more slowly (by design)."""
    kind = rng.choice(["recovery", "recovery", "gamma", "dead_time"])
    rate = float(rng.uniform(3, 30))
    if kind == "recovery":
        tau = float(rng.uniform(0.004, 0.012) * (1.8 if group == "enriched" else 1.0))
        dead = float(rng.uniform(0.001, 0.002))
        return simulate.ExpRecoveryISI(asymptotic_rate_hz=rate * 1.3, tau_s=tau,
                                       dead_time_s=dead)
    if kind == "gamma":
        return simulate.GammaISI(rate_hz=rate, shape=float(rng.uniform(1.5, 4)))
    return simulate.DeadTimeISI(rate_hz=rate, dead_time_s=float(rng.uniform(0.001, 0.003)))


def simulate_session(rng: np.random.Generator, *, group: str, size: DemoSize):
    """Spike and event tables (seconds) of one synthetic session."""
    n_trials = int(size.duration_s / size.mean_trial_interval_s) - 2
    onsets = 1.5 + np.cumsum(rng.uniform(0.7, 1.3, n_trials) * size.mean_trial_interval_s)
    onsets = onsets[onsets < size.duration_s - 2.0]
    conditions = rng.choice(list(CONDITIONS), size=len(onsets))
    grid = np.arange(0.0, size.duration_s + 1e-3, 1e-3)
    shape = 1.0 / SHARED_GAIN_CV.get(group, 0.0) ** 2 if SHARED_GAIN_CV.get(group) else None
    shared = rng.gamma(shape, 1.0 / shape, len(onsets) + 1) if shape else None
    units, times = [], []
    for u in range(size.units_per_session):
        model = _unit_model(rng, group)
        baseline = 1.0 / model.mean_isi_s
        gain = float(rng.uniform(0.25, 0.5))
        # responses differ between units (some barely respond), so the mean-count
        # distributions before and after the flash overlap, as mean matching needs
        amplitudes = np.array([CONDITIONS[c] for c in conditions]) * rng.uniform(0.1, 1.5)
        rate = simulate.event_locked_rate(grid, event_times_s=onsets,
                                          event_amplitudes_hz=amplitudes, baseline_hz=baseline,
                                          gain_cv=gain, rng=rng, shared_gain=shared)
        train = simulate.modulated_renewal_train(model, grid_s=grid, rate_hz=rate, rng=rng)
        units.append(np.full(len(train), f"u{u + 1:02d}"))
        times.append(train)
    spikes = pd.DataFrame({"unit": np.concatenate(units), "time": np.concatenate(times)})
    # the animal licks 0.35-0.6 s after most flashes (a second event to align on); on about a
    # fifth of the trials it does not, and that trial has no lick time (empty cell)
    licks = onsets + rng.uniform(0.35, 0.6, len(onsets))
    licks[rng.random(len(onsets)) < 0.2] = np.nan
    events = pd.DataFrame({"time": onsets, "condition": conditions,
                           "trial": np.arange(1, len(onsets) + 1), "lick_time": licks})
    return spikes, events


def write_nwb(path: Path, spikes: pd.DataFrame, events: pd.DataFrame, session: str,
               subject: str) -> None:
    from pynwb import NWBHDF5IO, NWBFile
    from pynwb.file import Subject

    nwb = NWBFile(session_description=f"SYNTHETIC demo session {session}",
                  identifier=f"spikevar-demo-{session}",
                  session_start_time=datetime(2026, 1, 1, tzinfo=UTC),
                  subject=Subject(subject_id=subject, species="Mus musculus",
                                  description="fictional animal, synthetic data"))
    nwb.add_unit_column(name="unit", description="unit label used in the sorting (synthetic)")
    for unit, frame in spikes.groupby("unit", sort=True):
        nwb.add_unit(spike_times=frame["time"].to_numpy(), unit=str(unit))
    nwb.add_trial_column(name="condition", description="flash condition (synthetic)")
    licks = events["lick_time"] if "lick_time" in events else None
    if licks is not None:
        nwb.add_trial_column(name="lick_time", description="lick time, s (synthetic; NaN: none)")
    for i, (t, c) in enumerate(zip(events["time"], events["condition"], strict=True)):
        extra = {} if licks is None else {"lick_time": float(licks.iloc[i])}
        nwb.add_trial(start_time=float(t), stop_time=float(t) + 1.0, condition=str(c), **extra)
    with NWBHDF5IO(str(path), "w") as io:
        io.write(nwb)


def write_session(folder: Path, session: str, subject: str, spikes: pd.DataFrame,
                  events: pd.DataFrame, fmt: str) -> dict:
    """Write one session's files in format ``fmt``; return its sheet row."""
    row = {"session": session, "subject": subject, "spikes": "", "events": "",
           "unit_labels": "", "time_unit": "", "sampling_rate_hz": ""}
    if fmt == "csv_s":
        spikes.to_csv(folder / f"{session}_spikes.csv", index=False, float_format="%.6f")
        events.to_csv(folder / f"{session}_events.csv", index=False, float_format="%.6f")
        row.update(spikes=f"{session}_spikes.csv", events=f"{session}_events.csv",
                   time_unit="s")
    elif fmt == "tsvgz_ms":
        ms = spikes.assign(time=spikes["time"] * 1e3)
        ms.to_csv(folder / f"{session}_spikes.tsv.gz", sep="\t", index=False,
                  float_format="%.3f")
        events.assign(time=events["time"] * 1e3, lick_time=events["lick_time"] * 1e3).to_csv(
            folder / f"{session}_events.tsv", sep="\t", index=False, float_format="%.3f")
        row.update(spikes=f"{session}_spikes.tsv.gz", events=f"{session}_events.tsv",
                   time_unit="ms")
    elif fmt == "parquet_s":
        spikes.to_parquet(folder / f"{session}_spikes.parquet", index=False)
        events.to_parquet(folder / f"{session}_events.parquet", index=False)
        row.update(spikes=f"{session}_spikes.parquet", events=f"{session}_events.parquet",
                   time_unit="s")
    elif fmt == "npy_samples":  # a sorter's export: sample indices, unit ids, unit labels
        arrays = folder / f"{session}_sorted"
        arrays.mkdir(exist_ok=True)
        np.save(arrays / "times.npy", np.round(spikes["time"] * SAMPLING_RATE_HZ).astype(np.int64))
        np.save(arrays / "units.npy", spikes["unit"].to_numpy().astype(str))
        units = sorted(spikes["unit"].unique())
        pd.DataFrame({"unit": units, "label": ["mua" if i % 7 == 6 else "good"
                                                for i in range(len(units))]}).to_csv(
            arrays / "unit_labels.tsv", sep="\t", index=False)
        ev = np.round(events["time"] * SAMPLING_RATE_HZ).astype(np.int64)
        lick = np.round(events["lick_time"] * SAMPLING_RATE_HZ).astype("Int64")
        events.assign(time=ev, lick_time=lick).to_csv(folder / f"{session}_events.csv",
                                                      index=False)
        row.update(spikes=arrays.name, events=f"{session}_events.csv",
                   unit_labels=f"{arrays.name}/unit_labels.tsv", time_unit="samples",
                   sampling_rate_hz=f"{SAMPLING_RATE_HZ:g}")
    elif fmt == "nwb":
        write_nwb(folder / f"{session}.nwb", spikes, events, session, subject)
        row.update(spikes=f"{session}.nwb", events=f"{session}.nwb", time_unit="s")
    else:  # pragma: no cover
        raise ValueError(fmt)
    return row


def build_demo_cohort(out: str | Path, *, seed: int = 7, size: DemoSize | None = None,
                      subjects: dict[str, str] | None = None) -> Path:
    """Write the synthetic cohort and its ``sessions.tsv`` into ``out``; return the sheet path."""
    size = size or DemoSize()
    subjects = subjects or SUBJECTS
    folder = Path(out)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    rows, k = [], 0
    for subject, group in subjects.items():
        for s in range(size.sessions_per_subject):
            session = f"{subject}-s{s + 1}"
            spikes, events = simulate_session(rng, group=group, size=size)
            row = write_session(folder, session, subject, spikes, events,
                                FORMATS[k % len(FORMATS)])
            row.update(group=group, probe_depth_um=f"{int(rng.integers(300, 900))}",
                       data_origin="synthetic")
            rows.append(row)
            k += 1
    sheet = pd.DataFrame(rows)[["session", "subject", "group", "spikes", "events", "unit_labels",
                                "time_unit", "sampling_rate_hz", "probe_depth_um",
                                "data_origin"]]
    path = folder / "sessions.tsv"
    sheet.to_csv(path, sep="\t", index=False)
    (folder / "README.md").write_text(
        "# Brackenfold flash cohort (SYNTHETIC)\n\n"
        "Every file here was generated by `python -m spikevar.synth.demo`. The animals,\n"
        "sessions and spikes are invented; they exist to demonstrate and test spikevar, not to be\n"
        "analysed.\n")
    return path


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description="Write spikevar's synthetic demo cohort.")
    parser.add_argument("--out", default="demo/cohort", help="output folder")
    parser.add_argument("--seed", type=int, default=7, help="random seed")
    args = parser.parse_args(argv)
    path = build_demo_cohort(args.out, seed=args.seed)
    print(f"synthetic demo cohort written; sessions sheet: {path}")


if __name__ == "__main__":
    main()
