"""A cohort whose conditions have two factors, through Snakemake: the combined label and each
factor as its own column in every table that carries condition."""

import shutil

import pandas as pd
import pyarrow.parquet as pq
import pytest

from conftest import REPO, run_snakemake

pytestmark = pytest.mark.workflow

SETTINGS = """columns: {event_condition: [condition, side]}
recovery: {modulated_fit: false, tau_interval: false}
shared: {timecourse: false}
"""


def test_two_factor_conditions_reach_every_condition_table(tiny_cohort, tmp_path):
    cohort = tmp_path / "cohort"
    shutil.copytree(tiny_cohort.parent, cohort)
    sheet = pd.read_csv(cohort / "sessions.tsv", sep="\t", dtype=str, keep_default_na=False)
    sheet = sheet[sheet["events"].str.endswith(".csv")].head(2)  # two sessions, CSV events
    assert len(sheet) == 2
    for events in sheet["events"]:
        frame = pd.read_csv(cohort / events)
        frame["side"] = ["left" if i % 3 else "right" for i in range(len(frame))]
        frame.to_csv(cohort / events, index=False)
    sheet.to_csv(cohort / "sessions.tsv", sep="\t", index=False)
    (tmp_path / "factors.yaml").write_text(SETTINGS)
    run_snakemake(tmp_path, "--configfile", str(REPO / "config" / "config.yaml"),
                  str(tmp_path / "factors.yaml"), "--config", "sessions=cohort/sessions.tsv",
                  "results=out")
    out = tmp_path / "out"
    events = pd.read_parquet(out / "sessions" / sheet["session"].iloc[0] / "events.parquet")
    assert set(events["condition"]) == {"condition=bright; side=left",
                                        "condition=bright; side=right",
                                        "condition=dim; side=left", "condition=dim; side=right"}
    tables = {name: pq.read_table(out / "cohort" / name).to_pandas()
              for name in ("fano_timecourse", "pair_correlations")}
    for name in ("shared_variance", "population_structure", "gain_variance", "population_fano",
                 "group_summary", "group_differences"):
        tables[name] = pd.read_parquet(out / "cohort" / f"{name}.parquet")
    for name, frame in tables.items():
        assert {"condition", "side"} <= set(frame.columns), name
        columns = list(frame.columns)
        assert columns.index("side") == columns.index("condition") + 2, name  # after condition
        rows = frame[frame["condition"] != ""]
        assert len(rows), name
        assert (rows["condition"].str.split("; ").str[1] == "side=" + rows["side"]).all(), name
    dictionary = (out / "handoff" / "data_dictionary.md").read_text()
    assert "| `side` | one factor of the condition" in dictionary
