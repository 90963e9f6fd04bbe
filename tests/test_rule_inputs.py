"""The helpers the .smk files use to build rule inputs and parameters."""

import pandas as pd

from spikevar.base.layout import (
    NORMALISED_TABLES,
    RECOVERY_FIGURE_CATEGORY,
    REPORT_CATEGORIES,
    ResultsLayout,
)
from spikevar.pipeline.rule_inputs import (
    RECOVERY_PARALLEL_MB,
    cohort_statistics_params,
    handoff_normalised_inputs,
    raw_spikes_mb,
    recovery_threads,
    report_categories,
    workflow_cores,
)


def _sheet(labels):
    return pd.DataFrame(
        {"spikes": ["a.csv", "b.csv"], "unit_labels": labels}, index=["s1", "s2"]
    )


def test_handoff_lists_every_normalised_table_and_only_given_label_tables():
    layout = ResultsLayout("res")
    inputs = handoff_normalised_inputs(_sheet(["", "b_labels.tsv"]), layout, NORMALISED_TABLES)
    expected = [layout.session_table(s, k) for s in ("s1", "s2") for k in NORMALISED_TABLES]
    assert inputs == expected + [layout.session_table("s2", "unit_labels")]
    # a sheet without the optional column lists no label tables
    no_column = _sheet(["", ""]).drop(columns="unit_labels")
    assert handoff_normalised_inputs(no_column, layout, NORMALISED_TABLES) == expected


def test_statistics_params_carry_what_the_rules_read_and_track_the_code():
    config = {
        "columns": {"event_condition": ["contrast", "side"]},
        "seed": 7,
        "bootstrap": {"n_resamples": 100},
    }
    params = cohort_statistics_params(config, "cohort.run")
    assert params["factors"] == ["contrast", "side"]
    assert params["seed"] == 7 and params["bootstrap"] == {"n_resamples": 100}
    assert len(params["code"]) == 16
    without = cohort_statistics_params(config, "population.run", bootstrap=False)
    assert "bootstrap" not in without
    assert without["code"] != params["code"]  # a different module, a different fingerprint


def test_report_lists_the_recovery_figure_category_only_when_they_are_drawn():
    every = [name for name, _ in REPORT_CATEGORIES]
    assert report_categories({"figures": {"session_recovery": True}}) == every
    left_out = report_categories({"figures": {"session_recovery": False}})
    assert RECOVERY_FIGURE_CATEGORY in every and RECOVERY_FIGURE_CATEGORY not in left_out
    assert len(left_out) == len(every) - 1


def test_only_large_sessions_take_two_threads_for_their_fits():
    from spikevar.recovery.table import PARALLEL_MIN_SPIKES

    # the spike table holds about 8 bytes per spike: the same size as the table's own limit
    assert RECOVERY_PARALLEL_MB * 1e6 / 8 == PARALLEL_MIN_SPIKES
    assert recovery_threads(1.0) == 1 and recovery_threads(180.0) == 2
    # a job per stage on a small machine: the fits leave the second core to the other stages
    assert recovery_threads(180.0, cores=2) == 1 and recovery_threads(180.0, cores=3) == 1
    assert recovery_threads(180.0, cores=4) == 2 and recovery_threads(1.0, cores=8) == 1


def test_cores_of_a_run_without_cores_are_unknown():
    from snakemake.exceptions import WorkflowError

    class Local:
        cores = 2

    class Cluster:  # Snakemake's workflow.cores raises when --cores was not given
        @property
        def cores(self):
            raise WorkflowError("Workflow requires a total number of cores to be defined")

    assert workflow_cores(Local()) == 2 and workflow_cores(Cluster()) is None
    assert recovery_threads(180.0, workflow_cores(Cluster())) == 2


def test_raw_spike_size_counts_the_spike_files_only(tmp_path):
    (tmp_path / "s.csv").write_bytes(b"x" * 3_000_000)
    (tmp_path / "e.csv").write_bytes(b"x" * 5_000_000)
    sheet = pd.DataFrame({"spikes": [str(tmp_path / "s.csv"), str(tmp_path / "gone.csv")],
                          "events": [str(tmp_path / "e.csv"), ""]}, index=["s1", "s2"])
    config = {"spike_arrays": {"times": "times.npy", "units": "units.npy"}}
    assert raw_spikes_mb(sheet, "s1", config) == 3.0
    assert raw_spikes_mb(sheet, "s2", config) == 0.0  # ingestion reports the missing file
