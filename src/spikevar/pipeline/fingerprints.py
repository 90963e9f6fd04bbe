"""Fingerprints of the code behind each rule, so that a code change reruns what it affects.

Modules are named by their dotted path inside the package (``"metrics.session"``). Imports are
read from the source text by a pattern for import statements (nothing is imported or parsed, so
a dry run stays fast; ``tests/test_fingerprints.py`` checks that it finds what :mod:`ast` finds
in every module) and followed through the package; a rule names only the modules its script
calls.
"""

from __future__ import annotations

import hashlib
import re
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


def _absolute(level: int, module: str, importer: str) -> str | None:
    """The dotted name (inside spikevar) that ``from <level dots><module> import`` in module
    ``importer`` refers to."""
    if level == 0:
        if module == "spikevar":
            return ""
        return module.removeprefix("spikevar.") if module.startswith("spikevar.") else None
    here = importer.split(".")
    source = module_source(importer)
    is_package = source is not None and source.name == "__init__.py"
    base = here if is_package else here[:-1]
    base = base[: len(base) - (level - 1)]
    return ".".join([*base, *([module] if module else [])])


#: ``from X import a, b`` or ``from X import (a,\n b)`` at the start of a line (any indent)
_FROM_IMPORT = re.compile(r"^[ \t]*from[ \t]+(\.*)([\w.]*)[ \t]+import[ \t]+(\([^)]*\)|[^\n]*)",
                          re.MULTILINE)
#: ``import X, Y as Z`` at the start of a line
_IMPORT = re.compile(r"^[ \t]*import[ \t]+([^\n]*)", re.MULTILINE)


def _names(clause: str) -> list[str]:
    """The imported names of an import clause (parentheses, comments and ``as`` removed)."""
    clause = re.sub(r"#[^\n]*", "", clause).strip("()")
    return [part.split()[0] for part in clause.replace("\n", " ").split(",") if part.strip()]


@cache
def direct_imports(name: str) -> frozenset[str]:
    """The ``spikevar`` modules that module ``name`` imports (read from its source, not run)."""
    text = module_source(name).read_text()
    found: set[str] = set()
    for clause in _IMPORT.findall(text):
        found.update(n.removeprefix("spikevar.") for n in _names(clause)
                     if n.startswith("spikevar."))
    for dots, module, clause in _FROM_IMPORT.findall(text):
        base = _absolute(len(dots), module, name)
        if base is None:
            continue
        for alias in _names(clause):  # from spikevar.x import y: y may be a module of x
            child = f"{base}.{alias}" if base else alias
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
