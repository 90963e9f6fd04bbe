"""Settings objects built strictly from one config section each.

Every config section has one frozen dataclass in the stage that uses it; its field defaults are
the only defaults in the code (``tests/test_settings.py`` checks that the config schema states
the same ones). :func:`settings_from` refuses a key the dataclass does not have, naming the
closest valid key, so a typo is an error and never a silently ignored setting.
"""

from __future__ import annotations

import dataclasses
import difflib
from collections.abc import Mapping

from spikevar.base.errors import SpikevarInputError


def closest_key(key: str, valid) -> str | None:
    """The valid key most like ``key`` (for "did you mean"), or None."""
    found = difflib.get_close_matches(key, list(valid), n=1, cutoff=0.5)
    return found[0] if found else None


def unknown_key_error(key: str, valid, *, section: str | None) -> SpikevarInputError:
    name = f"{section}.{key}" if section else key
    guess = closest_key(key, valid)
    hint = f"did you mean '{guess}'? " if guess else ""
    return SpikevarInputError(
        f"The config has an unknown key '{name}'.",
        fix=f"{hint}valid keys{' of ' + section if section else ''}: "
            f"{', '.join(sorted(valid))} (see workflow/schemas/config.schema.yaml).",
        where="config")


def settings_from(cls, values: Mapping | None, *, section: str):
    """Build settings dataclass ``cls`` from a config section, refusing unknown keys.

    Missing keys take the dataclass defaults; list values become tuples where the default is
    a tuple (config files and JSON have only lists).
    """
    values = dict(values or {})
    fields = {f.name: f for f in dataclasses.fields(cls)}
    for key in values:
        if key not in fields:
            raise unknown_key_error(key, fields, section=section)
    for key, value in values.items():
        if isinstance(value, list) and isinstance(fields[key].default, tuple):
            values[key] = tuple(value)
    return cls(**values)


def defaults_of(cls) -> dict:
    """The field defaults of a settings dataclass (tuples as lists, as a config would say)."""
    out = {}
    for field in dataclasses.fields(cls):
        value = field.default
        if value is dataclasses.MISSING:
            value = field.default_factory()
        out[field.name] = list(value) if isinstance(value, tuple) else value
    return out
