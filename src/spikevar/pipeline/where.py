"""Print where a finished run put its results (used at the end of `make demo`)."""

from __future__ import annotations

import sys
from pathlib import Path


def describe(results: str | Path) -> str:
    """A short, human listing of the result folders that exist."""
    root = Path(results).resolve()
    lines = [f"spikevar results are in {root}"]
    parts = [
        ("sessions", "per-session normalised spikes/events and metric tables (Parquet)"),
        ("cohort", "cohort tables joined with the sheet's metadata (Parquet + CSV)"),
        ("figures", "figure set (PNG + SVG)"),
        ("handoff", "data dictionary (Markdown + JSON) and run manifest for collaborators"),
        ("logs", "one log per job"),
    ]
    for name, what in parts:
        folder = root / name
        if folder.exists():
            lines.append(f"  {folder}/  - {what}")
    for name, what in (("datapackage.json", "Data Package descriptor listing every table"),
                       ("report.html", "HTML report with figure captions")):
        if (root / name).exists():
            lines.append(f"  {root / name}  - {what}")
    return "\n".join(lines)


if __name__ == "__main__":
    print(describe(sys.argv[1] if len(sys.argv) > 1 else "results"))
