"""Shared fixtures: small synthetic cohorts and a helper that runs Snakemake for real."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from spikevar.synth.demo import DemoSize, build_demo_cohort

REPO = Path(__file__).resolve().parents[1]


def run_snakemake(workdir: Path, *args: str, check: bool = True) -> subprocess.CompletedProcess:
    """Run ``python -m snakemake`` on the repository's Snakefile in ``workdir``."""
    cmd = [sys.executable, "-m", "snakemake", "-s", str(REPO / "Snakefile"),
           "--directory", str(workdir), "--cores", "2", *args]
    env = {**os.environ, "PYTHONHASHSEED": "0"}
    proc = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=900)
    if check and proc.returncode != 0:
        raise AssertionError(f"snakemake failed ({proc.returncode}):\n{proc.stdout[-4000:]}\n"
                             f"{proc.stderr[-6000:]}")
    return proc


TINY = DemoSize(sessions_per_subject=1, units_per_session=3, duration_s=60.0,
                mean_trial_interval_s=2.0)


@pytest.fixture(scope="session")
def tiny_cohort(tmp_path_factory) -> Path:
    """Five sessions, one per input format, written once per test run (read-only use)."""
    folder = tmp_path_factory.mktemp("tiny_cohort")
    subjects = {"fen": "standard", "moss": "standard", "ash": "enriched", "sorrel": "enriched",
                "tansy": "enriched"}
    return build_demo_cohort(folder, seed=3, size=TINY, subjects=subjects)
