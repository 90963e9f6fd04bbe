"""spikevar's own figure look: colours chosen to stay distinct for colour-blind readers and in
greyscale (each series also differs by line style or marker), light grid, no top/right spines."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402

INK = "#26323d"
#: reference lines (Poisson level, diagonal): a light grey that stays behind the data
REFERENCE = "#9aa5b1"
#: group / condition colours: dark slate blue, amber, teal, plum (differ in lightness too)
SERIES = ["#2b4f81", "#d98c1f", "#2f8f83", "#8c4a86", "#6b7a8f"]
MODEL_STYLE = {
    "poisson": {"color": "#6b7a8f", "linestyle": ":", "label": "Poisson"},
    "dead_time": {"color": "#d98c1f", "linestyle": "--", "label": "dead time"},
    "exp_recovery": {"color": "#2b4f81", "linestyle": "-", "label": "exponential recovery"},
}
MARKERS = ["o", "s", "^", "D", "v"]


def apply_style() -> None:
    """Set the rc parameters once per figure-drawing process."""
    plt.rcParams.update({
        "figure.dpi": 110, "savefig.dpi": 150, "font.size": 9, "axes.titlesize": 10,
        "axes.labelsize": 9, "axes.edgecolor": INK, "axes.labelcolor": INK, "text.color": INK,
        "xtick.color": INK, "ytick.color": INK, "axes.spines.top": False,
        "axes.spines.right": False, "axes.grid": True, "grid.color": "#e3e7ec",
        "grid.linewidth": 0.6, "legend.frameon": False, "svg.fonttype": "none",
        # the same figure gives the same SVG file: element ids from a fixed salt
        "svg.hashsalt": "spikevar",
    })


def save_titled(fig, path, title: str) -> None:
    """The many-panel figures' ending: the title flush left above the panels (wrapped to the
    figure's width), then save."""
    import textwrap

    width_in = fig.get_size_inches()[0]
    # about 13 characters per inch at the title size (10 pt): wrap with room to spare
    fig.suptitle(textwrap.fill(title, max(30, int(width_in * 11))), x=0.01, ha="left")
    fig.tight_layout()
    save(fig, path)


def save(fig, path, *, trim: bool = True) -> None:
    """Save as PNG and, next to it, SVG; close the figure.

    ``trim`` crops to the drawn content; figures laid out by hand pass ``False`` (measuring every
    text label for the crop costs seconds on figures with many panels).
    """
    from pathlib import Path

    from spikevar.base.parquet_io import write_with_temporary

    path = Path(path)
    bbox = "tight" if trim else None
    try:
        for out in (path, path.with_suffix(".svg")):
            fmt = out.suffix.lstrip(".")
            # no creation date in the file: the same figure gives the same bytes
            metadata = {"Date": None} if fmt == "svg" else None
            write_with_temporary(out, lambda tmp, fmt=fmt, metadata=metadata: fig.savefig(
                tmp, format=fmt, bbox_inches=bbox, metadata=metadata))
    finally:
        plt.close(fig)


def clipped_texts(fig, *, tolerance_px: float = 1.0) -> list[str]:
    """What of ``fig`` reaches outside the figure (before any tight crop): its own texts (the
    title) by their text, and each panel whose drawn labels, ticks or legend stick out, by
    its title. Empty when a reader would see every label at the figure's own size."""
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    box = fig.bbox

    def outside(extent) -> bool:
        return (extent.x0 < box.x0 - tolerance_px or extent.y0 < box.y0 - tolerance_px
                or extent.x1 > box.x1 + tolerance_px or extent.y1 > box.y1 + tolerance_px)

    found = [t.get_text() for t in fig.texts
             if t.get_visible() and t.get_text().strip() and outside(t.get_window_extent(renderer))]
    for ax in fig.axes:
        extent = ax.get_tightbbox(renderer)
        if ax.get_visible() and extent is not None and outside(extent):
            found.append(f"panel '{ax.get_title(loc='left') or ax.get_title()}'")
    return found
