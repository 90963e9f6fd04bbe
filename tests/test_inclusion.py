"""Which units count: each inclusion rule with its reason, the defaults, the label table."""

import numpy as np
import pandas as pd
import pytest

from spikevar.base.errors import SpikevarInputError
from spikevar.inputs.unit_labels import read_unit_labels
from spikevar.metrics.inclusion import label_coverage, select_units, trials_while_recorded
from spikevar.metrics.settings import InclusionSettings


def units_table():
    return pd.DataFrame({
        "unit": ["1", "2", "3", "4"],
        "n_spikes": [5000, 40, 3000, 3000],
        "rate_hz": [8.0, 0.05, 5.0, 5.0],
        "refractory_violation_fraction": [0.001, 0.0, 0.03, 0.0],
        "contamination_hill": [0.01, np.nan, 0.4, 0.0],
        "stable": [True, True, True, False],
        "rate_drift_pvalue": [0.5, 0.3, 0.7, 1e-6],
        "first_spike_s": [0.0, 0.0, 0.0, 500.0],
        "last_spike_s": [600.0, 600.0, 600.0, 600.0],
    })


EVENTS = pd.DataFrame({"time_s": np.arange(10.0, 600.0, 10.0),
                       "condition": np.tile(["dim", "bright"], 30)[:59]})


def selection(settings, labels=None):
    units = units_table()
    spans = units[["unit", "first_spike_s", "last_spike_s"]].set_axis(
        ["unit", "first_s", "last_s"], axis=1)
    return select_units(units, settings=settings, labels=labels,
                        trials=trials_while_recorded(units, spans, EVENTS)).set_index("unit")


def test_defaults_keep_every_unit():
    chosen = selection(InclusionSettings())
    assert chosen["included"].all() and (chosen["exclusion_reasons"] == "").all()


def test_each_rule_names_its_reason_and_reasons_accumulate():
    chosen = selection(InclusionSettings(
        min_spikes=100, min_rate_hz=0.5, max_violation_fraction=0.01, max_contamination=0.2,
        min_trials_per_condition=10, require_stable=True))
    assert chosen.loc["1", "included"]
    assert chosen.loc["2", "exclusion_reasons"] == ("40 spikes, fewer than 100; "
                                                    "rate 0.05 Hz, under 0.5 Hz; "
                                                    "contamination not estimable")
    assert "refractory violations 3%, over 1%" in chosen.loc["3", "exclusion_reasons"]
    assert "contamination 0.4, over 0.2" in chosen.loc["3", "exclusion_reasons"]
    # unit 4 is recorded from 500 s only: 5 trials of each condition, and its rate drifts
    assert chosen.loc["4", "exclusion_reasons"] == (
        "5 trials of a condition while recorded, fewer than 10; "
        "rate drifts over the session (p = 1e-06)")
    assert list(chosen["included"]) == [True, False, False, False]
    assert chosen.loc["2", "excluded_by"] == "min_spikes;min_rate_hz;max_contamination"
    assert chosen.loc["1", "excluded_by"] == ""


def test_labels_rule_uses_the_table_and_never_guesses():
    labels = pd.Series({"1": "good", "2": "mua", "3": "good"})
    chosen = selection(InclusionSettings(labels=["good"]), labels=labels)
    assert list(chosen["label"]) == ["good", "mua", "good", ""]
    assert chosen.loc["2", "exclusion_reasons"] == "label 'mua' not accepted"
    assert chosen.loc["4", "exclusion_reasons"] == "no label"
    unknown, unlabelled = label_coverage(pd.Series({"1": "good", "99": "noise"}),
                                         ["1", "2"])
    assert unknown == ["99"] and unlabelled == ["2"]


def test_trials_count_only_while_the_unit_was_recorded():
    units = units_table()
    spans = pd.DataFrame({"unit": units["unit"], "first_s": units["first_spike_s"],
                          "last_s": units["last_spike_s"]})
    trials = trials_while_recorded(units, spans, EVENTS)
    assert trials["1"] == 29 and trials["4"] == 5  # bright: 29 of 59 events; 500-600 s: 5
    assert trials_while_recorded(units, spans, EVENTS.iloc[:0]).isna().all()


def test_label_table_reading_and_its_errors(tmp_path):
    good = tmp_path / "labels.tsv"
    good.write_text("cluster\tquality\n007\tgood\n8\tmua\n8\tmua\n")
    labels = read_unit_labels(good, session="s1", unit_column="cluster", label_column="quality")
    assert labels.to_dict() == {"007": "good", "8": "mua"}  # ids stay text: 007 is not 7
    with pytest.raises(SpikevarInputError) as err:
        read_unit_labels(good, session="s1", unit_column="unit", label_column="quality")
    text = str(err.value)
    assert "s1" in text and "labels.tsv" in text and "'unit'" in text and "unit_labels.unit" in text
    clash = tmp_path / "clash.csv"
    clash.write_text("unit,label\n3,good\n3,noise\n")
    with pytest.raises(SpikevarInputError, match="two different labels"):
        read_unit_labels(clash, session="s1", unit_column="unit", label_column="label")
    blank = tmp_path / "blank.csv"
    blank.write_text("unit,label\n,good\n")
    with pytest.raises(SpikevarInputError, match="rows 2"):
        read_unit_labels(blank, session="s1", unit_column="unit", label_column="label")
