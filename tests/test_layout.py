"""The package's import directions, read from the source with ast (nothing is imported).

The science sub-packages never import the workflow glue, the figures or the simulator, and
reading inputs imports no statistics. Each sub-package's docstring states what it may import;
this test holds the rule and checks that code and docstrings both follow it.
"""

import ast
import re
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "src" / "spikevar"

# sub-package -> the other sub-packages it may import
MAY_IMPORT = {
    "base": set(),
    "inputs": {"base"},
    "metrics": {"base"},
    "recovery": {"base"},
    "population": {"base", "metrics"},
    "cohort": {"base", "metrics", "recovery", "population"},
    "figures": {"base", "metrics", "recovery", "population", "cohort"},
    "pipeline": {"base", "inputs", "metrics", "recovery", "population", "cohort", "figures"},
    "synth": {"base", "recovery"},
}
SCIENCE = {"inputs", "metrics", "recovery", "population", "cohort"}


def imported_subpackages(path: Path, package_dir: Path = PACKAGE) -> set[str]:
    """The spikevar sub-packages a module imports (absolute and relative imports)."""
    own = path.relative_to(package_dir).parts[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text())):
        names = []
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 0:
            names = [f"{node.module}.{a.name}" for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 1:
            names = [f"spikevar.{own}"]
        elif isinstance(node, ast.ImportFrom):  # from .. import x / from ..x import y
            names = [f"spikevar.{node.module or node.names[0].name}"]
        for name in names:
            parts = name.split(".")
            if parts[0] == "spikevar" and len(parts) > 1 and parts[1] in MAY_IMPORT:
                found.add(parts[1])
    return found - {own}


def test_every_module_lives_in_a_stage_subpackage():
    top = sorted(p.name for p in PACKAGE.glob("*.py"))
    assert top == ["__init__.py"], f"modules outside a sub-package: {top}"
    assert {p.name for p in PACKAGE.iterdir() if p.is_dir() and p.name != "__pycache__"} \
        == set(MAY_IMPORT)


@pytest.mark.parametrize("package", sorted(MAY_IMPORT))
def test_imports_follow_the_stage_direction(package):
    for path in sorted((PACKAGE / package).glob("*.py")):
        wrong = imported_subpackages(path) - MAY_IMPORT[package]
        assert not wrong, (f"{path.relative_to(PACKAGE)} imports {sorted(wrong)}; "
                           f"{package} may import only {sorted(MAY_IMPORT[package])}")


def test_science_never_imports_glue_figures_or_simulator():
    for package in SCIENCE:
        assert not MAY_IMPORT[package] & {"pipeline", "figures", "synth"}
    assert MAY_IMPORT["inputs"] == {"base"}  # reading inputs imports no statistics


@pytest.mark.parametrize("package", sorted(MAY_IMPORT))
def test_docstring_states_the_rule(package):
    doc = ast.get_docstring(ast.parse((PACKAGE / package / "__init__.py").read_text()))
    line = re.search(r"May import: (.*?)\.", doc.replace("\n", " "), re.S)
    assert line, f"{package}/__init__.py does not say what it may import"
    stated = set(re.findall(r"``(\w+)``", line.group(1)))
    assert stated == MAY_IMPORT[package]


def test_a_broken_direction_is_caught(tmp_path):
    fake = tmp_path / "spikevar"
    (fake / "metrics").mkdir(parents=True)
    bad = fake / "metrics" / "bad.py"
    bad.write_text("from spikevar.figures import style\nfrom ..synth import simulate\n")
    assert imported_subpackages(bad, fake) == {"figures", "synth"}


def test_no_test_imports_a_private_helper():
    # tests use a module's public names; a private helper is free to change
    tests = Path(__file__).resolve().parent
    found = []
    for path in sorted(tests.glob("*.py")):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("spikevar"):
                found += [f"{path.name}: {a.name}" for a in node.names
                          if a.name.startswith("_") and not a.name.startswith("__")]
    assert not found, found


def test_cohort_rule_inputs_name_cohort_tables_and_datasets():
    from spikevar.base.layout import (
        COHORT_DATASETS,
        COHORT_RULE_INPUTS,
        SESSION_TABLES,
        STATISTICS_TABLES,
        ResultsLayout,
    )

    layout = ResultsLayout("out")
    known = set(SESSION_TABLES) | set(STATISTICS_TABLES)
    for rule, tables in COHORT_RULE_INPUTS.items():
        assert set(tables) <= known, rule
        inputs = layout.cohort_inputs(rule)
        for table, path in inputs.items():
            # a dataset is read as its folder, every other table as its one file
            assert path.endswith(table if table in COHORT_DATASETS else f"{table}.parquet")
