"""Every rule runs as a separately submitted job with its declared resources (generic cluster
executor with a local submit script standing in for a batch system, shared filesystem)."""

import json
import sys
from pathlib import Path

import pytest

from conftest import REPO, run_snakemake
from spikevar.synth.demo import DemoSize, build_demo_cohort

pytestmark = pytest.mark.workflow


def test_cluster_submission_with_declared_resources(tmp_path):
    sheet = build_demo_cohort(tmp_path / "cohort", seed=5,
                              size=DemoSize(1, 2, 40.0, 2.0),
                              subjects={"fen": "standard", "ash": "enriched"})
    records = tmp_path / "jobs"
    submit = (f"{sys.executable} {REPO / 'tests' / 'submit_local.py'} {records} "
              "{resources.mem_mb} {resources.runtime} {rule}")
    run_snakemake(tmp_path, "--executor", "cluster-generic", "--cluster-generic-submit-cmd",
                  submit, "--jobs", "4", "--latency-wait", "30", "--config",
                  f"sessions={sheet}", "results=out")
    jobs = [json.loads(p.read_text()) for p in records.glob("*.json")]
    rules = {j["rule"] for j in jobs}
    # per-session rules are grouped: one submission per session
    groups = [j for j in jobs if j["rule"] == "GROUP"]
    assert len(groups) == 2
    for g in groups:
        name = Path(g["jobscript"]).name
        for rule in ("ingest_session", "session_metrics", "session_recovery",
                     "session_recovery_figure"):
            assert rule in name
    assert {"cohort_table", "population_fano", "group_summary", "handoff",
            "cohort_figures"} <= rules
    for job in jobs:
        assert int(job["mem_mb"]) >= 2000 and int(job["runtime"]) >= 10
    assert (tmp_path / "out" / "datapackage.json").exists()
    assert (tmp_path / "out" / "figures" / "population_fano.png").exists()
