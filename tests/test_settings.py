"""One settings object per config section: strict, and with the schema's defaults.

The dataclass defaults are the only defaults in the code; the schema documents the same ones,
and the shipped config/config.yaml states them too.
"""

import dataclasses
from pathlib import Path

import pytest
import yaml

from spikevar.base.errors import SpikevarInputError
from spikevar.base.settings import defaults_of, settings_from
from spikevar.metrics.settings import MetricSettings
from spikevar.pipeline.settings import SECTIONS, TOP_LEVEL, check_config

REPO = Path(__file__).resolve().parents[1]
SCHEMA = yaml.safe_load((REPO / "workflow" / "schemas" / "config.schema.yaml").read_text())
CONFIG = yaml.safe_load((REPO / "config" / "config.yaml").read_text())


def test_every_schema_section_has_one_settings_object():
    sections = {k for k, v in SCHEMA["properties"].items()
                if v.get("type") == "object" and k not in TOP_LEVEL}
    assert sections == set(SECTIONS)
    assert set(SCHEMA["properties"]) == set(SECTIONS) | set(TOP_LEVEL)


def test_epoch_defaults_are_one_set():
    from spikevar.population.settings import DEFAULT_EPOCHS, epochs_from

    assert epochs_from(SCHEMA["properties"]["epochs"]["default"]) == DEFAULT_EPOCHS
    assert epochs_from(CONFIG["epochs"]) == DEFAULT_EPOCHS
    assert epochs_from(None) == DEFAULT_EPOCHS
    with pytest.raises(SpikevarInputError, match="start before stop"):
        epochs_from({"late": [0.3, 0.1]})


def test_factor_epoch_must_name_an_epoch():
    config = dict(CONFIG, shared=dict(CONFIG["shared"], factor_epoch="stimulus"))
    with pytest.raises(SpikevarInputError, match="factor_epoch is 'stimulus'.*baseline"):
        check_config(config)


@pytest.mark.parametrize("section", sorted(SECTIONS))
def test_schema_defaults_equal_settings_defaults(section):
    properties = SCHEMA["properties"][section]["properties"]
    assert SCHEMA["properties"][section].get("additionalProperties") is False
    schema_defaults = {key: spec.get("default") for key, spec in properties.items()}
    assert schema_defaults == defaults_of(SECTIONS[section])


@pytest.mark.parametrize("section", sorted(SECTIONS))
def test_shipped_config_states_the_defaults(section):
    assert CONFIG[section] == defaults_of(SECTIONS[section])


def test_bootstrap_default_is_the_config_value():
    # the group statistics once had their own default (1,000) beside the config's 2,000
    assert SECTIONS["bootstrap"]().n_boot == CONFIG["bootstrap"]["n_boot"] == 2000


def test_lvr_constant_is_written_once_in_the_package():
    hits = [p for p in (REPO / "src" / "spikevar").rglob("*.py")
            if "0.005" in p.read_text()]
    assert [p.name for p in hits] == ["settings.py"]


def test_unknown_key_names_the_closest_valid_key():
    with pytest.raises(SpikevarInputError) as err:
        settings_from(MetricSettings, {"lvr_refractoy_s": 0.004}, section="metrics")
    message = str(err.value)
    assert "metrics.lvr_refractoy_s" in message and "did you mean 'lvr_refractory_s'" in message


def test_check_config_refuses_typos_at_any_level():
    good = {**CONFIG}
    assert check_config(good)["metrics"] == MetricSettings()
    with pytest.raises(SpikevarInputError, match="did you mean 'bootstrap'"):
        check_config({**CONFIG, "bootstrapp": {"n_boot": 10}})
    with pytest.raises(SpikevarInputError, match="did you mean 'n_boot'"):
        check_config({**CONFIG, "population": {"nboot": 10}})


def test_lists_become_tuples_and_settings_are_frozen():
    settings = settings_from(MetricSettings, {"counting_windows_s": [0.1, 1.0]},
                             section="metrics")
    assert settings.counting_windows_s == (0.1, 1.0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        settings.lvr_refractory_s = 1.0


def test_session_id_pattern_is_the_layouts():
    # the sheet check, the workflow wildcard and the sheet schema use one pattern
    from spikevar.base.layout import SESSION_ID_PATTERN

    sheet_schema = yaml.safe_load(
        (REPO / "workflow" / "schemas" / "sessions.schema.yaml").read_text())
    assert sheet_schema["properties"]["session"]["pattern"] == f"^{SESSION_ID_PATTERN}$"
    assert "SESSION_ID_PATTERN" in (REPO / "workflow" / "rules" / "common.smk").read_text()
