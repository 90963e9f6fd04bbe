"""Import cost of each rule (not a test; prints numbers).

Each rule script's ``from spikevar... import ...`` lines are run in a fresh interpreter, best of
``--repeats``, next to the interpreter's own start-up and the common base (numpy, pandas,
pyarrow.parquet) that almost every rule needs. Also says whether scipy.stats or matplotlib were
loaded, the two heaviest imports a rule can pull in without using them.

Run: .venv/bin/python bench/bench_imports.py [--repeats 5]
"""

import argparse
import re
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
PROBE = """
import sys, time
t0 = time.perf_counter()
{imports}
dt = time.perf_counter() - t0
heavy = [m for m in ("scipy.stats", "matplotlib", "scipy.integrate", "pynwb") if m in sys.modules]
print(dt, ",".join(heavy))
"""


def import_seconds(imports: str, repeats: int) -> tuple[float, str]:
    best, heavy = float("inf"), ""
    for _ in range(repeats):
        out = subprocess.run([sys.executable, "-c", PROBE.format(imports=imports)],
                             capture_output=True, text=True, check=True,
                             cwd=REPO, env={"PYTHONPATH": str(REPO / "src"), "PATH": ""})
        seconds, heavy = out.stdout.split()[0], (out.stdout.split() + [""])[1]
        best = min(best, float(seconds))
    return best, heavy


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args()
    base, _ = import_seconds("import numpy, pandas, pyarrow.parquet", args.repeats)
    print(f"numpy + pandas + pyarrow.parquet alone: {base:.2f} s")
    print(f"{'rule script':<28} {'import s':>8}  heavy modules loaded")
    for script in sorted((REPO / "scripts").glob("*.py")):
        if script.name == "readme_figures.py":  # a developer tool, not a rule
            continue
        lines = [line.split("#")[0].rstrip() for line in script.read_text().splitlines()
                 if re.match(r"from spikevar\S* import", line)]
        seconds, heavy = import_seconds("\n".join(lines), args.repeats)
        print(f"{script.stem:<28} {seconds:8.2f}  {heavy or '-'}")


if __name__ == "__main__":
    main()
