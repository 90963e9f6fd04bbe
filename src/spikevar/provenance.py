"""Fingerprints of the code behind each rule, so that a code change reruns what it affects."""

from __future__ import annotations

import hashlib
import importlib
from pathlib import Path


def code_fingerprint(*modules: str) -> str:
    """Short sha256 over the source files of the named ``spikevar`` modules.

    Given to a rule as a parameter: Snakemake reruns a job when its parameters change, and it
    does not track imported Python code by itself.
    """
    digest = hashlib.sha256()
    for name in sorted(set(modules)):
        module = importlib.import_module(f"spikevar.{name}")
        digest.update(name.encode())
        digest.update(Path(module.__file__).read_bytes())
    return digest.hexdigest()[:16]
