"""Copy three of the demo's figures, made small, to docs/figures/ for the README.

    python scripts/readme_figures.py [RESULTS] [OUT]    (make readme-figures, after make demo)
"""

import sys
from pathlib import Path

from PIL import Image

#: the figures the README shows, in its order
FIGURES = ("population_fano", "tau_vs_cv", "shared_over_time")
WIDTH_PX = 800


def main(results: str = "results/demo", out: str = "docs/figures") -> None:
    target = Path(out)
    target.mkdir(parents=True, exist_ok=True)
    for name in FIGURES:
        source = Path(results) / "figures" / f"{name}.png"
        if not source.exists():
            sys.exit(f"{source} is missing: run `make demo` first.")
        with Image.open(source) as image:
            height = round(image.height * WIDTH_PX / image.width)
            small = image.convert("RGB").resize((WIDTH_PX, height), Image.LANCZOS)
            # a 64-colour palette keeps the files small (the figures use a few colours)
            small.quantize(colors=64).save(target / f"{name}.png", optimize=True)
        print(f"{target / name}.png ({WIDTH_PX} x {height})")


if __name__ == "__main__":
    main(*sys.argv[1:3])
