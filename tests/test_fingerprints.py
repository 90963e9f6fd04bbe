"""Code fingerprints: a change to any module behind a rule must change that rule's parameter."""

import ast
import re
import shutil
from pathlib import Path

import pytest

from spikevar.pipeline import fingerprints
from spikevar.pipeline.fingerprints import code_fingerprint, modules_behind

REPO = Path(__file__).resolve().parents[1]
RULE = re.compile(r"^rule (\w+):(.*?)(?=^rule |\Z)", re.S | re.M)


def rules():
    """(rule, modules listed in its code_fingerprint, script path) for every rule with a script."""
    found = []
    for smk in sorted((REPO / "workflow" / "rules").glob("*.smk")):
        for name, body in RULE.findall(smk.read_text()):
            # the fingerprint is given directly or through the statistics rules' helper
            listed = re.search(r"(?:code_fingerprint|cohort_statistics_params)\((.*?)\)", body,
                               re.S)
            script = re.search(r'script:\s*"([^"]+)"', body)
            if script:
                modules = re.findall(r'"([\w.]+)"', listed.group(1)) if listed else []
                found.append((name, modules, (smk.parent / script.group(1)).resolve()))
    return found


def test_every_rule_with_a_script_has_a_fingerprint():
    assert len(rules()) >= 8
    for name, modules, _ in rules():
        assert modules, f"rule {name} has no code_fingerprint"


@pytest.mark.parametrize("name,modules,script", rules(), ids=[r[0] for r in rules()])
def test_fingerprint_covers_everything_the_script_imports(name, modules, script):
    imported = set()
    for node in ast.walk(ast.parse(script.read_text())):
        if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("spikevar."):
            imported.add(node.module.removeprefix("spikevar."))
    # the job wrapper only handles logging and errors; it does not shape any output
    missing = imported - {"pipeline.jobs"} - set(modules_behind(*modules))
    assert not missing, f"rule {name}: add {sorted(missing)} to its code_fingerprint"


def test_imports_are_followed_through_the_package():
    behind = modules_behind("inputs.ingest")
    # ingest -> ordered_scan -> unit_order: both are behind the ingest rule, and so are the
    # __init__ files Python runs on the way
    assert {"inputs.ingest", "inputs.ordered_scan", "base.unit_order", "base.parquet_io",
            "base.errors", "inputs", "base", ""} <= set(behind)
    assert not any(m.startswith(("metrics", "recovery", "figures")) for m in behind)
    with pytest.raises(ValueError, match="no module"):
        modules_behind("not_a_module")


def test_a_change_in_an_indirect_import_changes_the_fingerprint(tmp_path, monkeypatch):
    package = tmp_path / "spikevar"
    shutil.copytree(fingerprints.PACKAGE_DIR, package)
    monkeypatch.setattr(fingerprints, "PACKAGE_DIR", package)
    fingerprints.direct_imports.cache_clear()
    before = code_fingerprint("inputs.ingest")
    untouched = code_fingerprint("population.run")
    with open(package / "base" / "unit_order.py", "a") as handle:
        handle.write("\n# a change two imports away\n")
    assert code_fingerprint("inputs.ingest") != before
    assert code_fingerprint("population.run") == untouched
    fingerprints.direct_imports.cache_clear()


def test_relative_imports_are_followed(tmp_path, monkeypatch):
    package = tmp_path / "spikevar"
    (package / "metrics").mkdir(parents=True)
    for init in (package / "__init__.py", package / "metrics" / "__init__.py"):
        init.write_text("")
    (package / "metrics" / "a.py").write_text("from . import b\nfrom .c import f\n")
    (package / "metrics" / "b.py").write_text("")
    (package / "metrics" / "c.py").write_text("def f():\n    pass\n")
    monkeypatch.setattr(fingerprints, "PACKAGE_DIR", package)
    fingerprints.direct_imports.cache_clear()
    assert modules_behind("metrics.a") == ["", "metrics", "metrics.a", "metrics.b", "metrics.c"]
    fingerprints.direct_imports.cache_clear()


def imports_by_ast(name: str) -> frozenset[str]:
    """Reference: the spikevar modules a module imports, from its syntax tree."""
    found = set()
    for node in ast.walk(ast.parse(fingerprints.module_source(name).read_text())):
        if isinstance(node, ast.Import):
            found.update(a.name.removeprefix("spikevar.") for a in node.names
                         if a.name.startswith("spikevar."))
        elif isinstance(node, ast.ImportFrom):
            base = fingerprints._absolute(node.level, node.module or "", name)
            if base is None:
                continue
            for alias in node.names:
                child = f"{base}.{alias.name}" if base else alias.name
                found.add(child if fingerprints.module_source(child) is not None else base)
    return frozenset(m for m in found if fingerprints.module_source(m) is not None)


def test_import_statements_read_from_the_text_are_those_of_the_syntax_tree():
    # the dry run reads imports with a pattern (no parsing); in every module of the package
    # it must find exactly what Python's own parser finds
    package = REPO / "src" / "spikevar"
    names = [".".join(p.relative_to(package).with_suffix("").parts).removesuffix("__init__")
             .rstrip(".") for p in package.rglob("*.py")]
    assert len(names) > 50
    for name in names:
        assert fingerprints.direct_imports(name) == imports_by_ast(name), name
