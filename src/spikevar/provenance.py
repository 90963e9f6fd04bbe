"""Fingerprints of the code behind each rule, so that a code change reruns what it affects."""

from __future__ import annotations

import ast
import hashlib
from functools import cache
from pathlib import Path

PACKAGE_DIR = Path(__file__).resolve().parent


def _source(name: str) -> Path:
    return PACKAGE_DIR / f"{name}.py"


@cache
def _direct_imports(name: str) -> frozenset[str]:
    """The ``spikevar`` modules that module ``name`` imports (read from its source, not run)."""
    found: set[str] = set()
    for node in ast.walk(ast.parse(_source(name).read_text())):
        if isinstance(node, ast.Import):
            found.update(a.name.split(".")[1] for a in node.names
                         if a.name.startswith("spikevar."))
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level == 0 and not (base == "spikevar" or base.startswith("spikevar.")):
                continue
            parts = base.split(".")[1:] if node.level == 0 else base.split(".") if base else []
            if parts and parts[0]:
                found.add(parts[0])
            else:  # from spikevar import a, b: modules, or names of the package itself
                found.update(a.name if _source(a.name).exists() else "__init__"
                             for a in node.names)
    return frozenset(m for m in found if _source(m).exists())


def modules_behind(*modules: str) -> list[str]:
    """The named ``spikevar`` modules and every ``spikevar`` module they import, transitively."""
    seen: set[str] = set()
    todo = list(modules)
    while todo:
        name = todo.pop()
        if name in seen:
            continue
        if not _source(name).exists():
            raise ValueError(f"spikevar has no module {name!r}")
        seen.add(name)
        todo.extend(_direct_imports(name) - seen)
    return sorted(seen)


def code_fingerprint(*modules: str) -> str:
    """Short sha256 over the source of the named ``spikevar`` modules and all they import.

    Given to a rule as a parameter: Snakemake reruns a job when its parameters change, and it
    does not track imported Python code by itself. Imports are followed within the package, so
    a rule lists only the modules its script calls.
    """
    digest = hashlib.sha256()
    for name in modules_behind(*modules):
        digest.update(name.encode())
        digest.update(_source(name).read_bytes())
    return digest.hexdigest()[:16]
