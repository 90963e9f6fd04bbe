"""Fingerprints of the code behind each rule, so that a code change reruns what it affects.

Modules are named by their dotted path inside the package (``"metrics.session"``). Imports are
read from the source with :mod:`ast` (nothing is imported, so a dry run stays fast) and followed
through the package; a rule names only the modules its script calls.
"""

from __future__ import annotations

import ast
import hashlib
from functools import cache
from pathlib import Path

PACKAGE_DIR = Path(__file__).resolve().parents[1]


def module_source(name: str) -> Path | None:
    """The file of module ``name`` (``"base.errors"``; ``""`` is the package itself)."""
    parts = [p for p in name.split(".") if p]
    as_file = PACKAGE_DIR.joinpath(*parts).with_suffix(".py") if parts else None
    if as_file is not None and as_file.is_file():
        return as_file
    as_package = PACKAGE_DIR.joinpath(*parts, "__init__.py")
    return as_package if as_package.is_file() else None


def _absolute(node: ast.ImportFrom, importer: str) -> str | None:
    """The dotted name (inside spikevar) that an ``import from`` statement refers to."""
    if node.level == 0:
        module = node.module or ""
        if module == "spikevar":
            return ""
        return module.removeprefix("spikevar.") if module.startswith("spikevar.") else None
    here = importer.split(".")
    source = module_source(importer)
    is_package = source is not None and source.name == "__init__.py"
    base = here if is_package else here[:-1]
    base = base[: len(base) - (node.level - 1)]
    return ".".join([*base, *([node.module] if node.module else [])])


@cache
def direct_imports(name: str) -> frozenset[str]:
    """The ``spikevar`` modules that module ``name`` imports (read from its source, not run)."""
    found: set[str] = set()
    for node in ast.walk(ast.parse(module_source(name).read_text())):
        if isinstance(node, ast.Import):
            found.update(a.name.removeprefix("spikevar.") for a in node.names
                         if a.name.startswith("spikevar."))
        elif isinstance(node, ast.ImportFrom):
            base = _absolute(node, name)
            if base is None:
                continue
            for alias in node.names:  # from spikevar.x import y: y may be a module of x
                child = f"{base}.{alias.name}" if base else alias.name
                found.add(child if module_source(child) is not None else base)
    return frozenset(m for m in found if module_source(m) is not None)


def modules_behind(*modules: str) -> list[str]:
    """The named modules and every ``spikevar`` module they import, transitively.

    The ``__init__`` of each sub-package on the way is included too: Python runs it first.
    """
    seen: set[str] = set()
    todo = list(modules)
    while todo:
        name = todo.pop()
        if name in seen:
            continue
        if module_source(name) is None:
            raise ValueError(f"spikevar has no module {name!r}")
        seen.add(name)
        parts = name.split(".")
        parents = {".".join(parts[:k]) for k in range(len(parts))}
        todo.extend((direct_imports(name) | parents) - seen)
    return sorted(seen)


def code_fingerprint(*modules: str) -> str:
    """Short sha256 over the source of the named ``spikevar`` modules and all they import.

    Given to a rule as a parameter: Snakemake reruns a job when its parameters change, and it
    does not track imported Python code by itself.
    """
    digest = hashlib.sha256()
    for name in modules_behind(*modules):
        digest.update(name.encode())
        digest.update(module_source(name).read_bytes())
    return digest.hexdigest()[:16]
