"""Per-session figure of the recovery fits: ISI densities with model densities, and KS plots."""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.base.parquet_io import read_parquet_checked
from spikevar.base.spike_arrays import load_spikes
from spikevar.figures import style as figure_style
from spikevar.recovery import hazard_models


def _model_args(row: pd.Series) -> dict:
    return {"rate_hz": row["asymptotic_rate_hz"], "tau_s": row["recovery_tau_s"],
            "dead_time_s": row["dead_time_s"]}


def draw_session_recovery(*, session: str, spikes_path, recovery_path, output,
                          max_units: int) -> None:
    """Two panels per unit (up to ``max_units``): log-time ISI density and KS plot."""
    import matplotlib.pyplot as plt

    figure_style.apply_style()
    fits = read_parquet_checked(recovery_path, session=session).to_pandas()
    fits = fits[fits["fit_kind"] == "stationary"]
    # the recovery table lists every unit in the session's order: draw the first ones, and
    # read only their spikes
    labels = list(pd.unique(fits["unit"].astype(str)))[:max_units]
    spikes = load_spikes(spikes_path, session=session, units=labels)
    position = {str(label): k for k, label in enumerate(spikes.labels)}
    bounds = spikes.bounds()
    n = max(len(labels), 1)
    fig, axes = plt.subplots(n, 2, figsize=(WIDTH_IN, ROW_IN * n + 0.4), squeeze=False)
    _fixed_layout(fig, n)
    for k, unit in enumerate(labels):
        j = position.get(unit)
        isi = np.diff(spikes.times[bounds[j]:bounds[j + 1]]) if j is not None else np.zeros(0)
        dens_ax, ks_ax = axes[k]
        rows = fits[fits["unit"] == unit]
        dens_ax.set_title(f"{session} / unit {unit}: interval distribution", loc="left")
        ks_ax.set_title("time-rescaling check", loc="left")
        dens_ax.set_xlabel("inter-spike interval (s, log scale)")
        dens_ax.set_ylabel("density per log10(s)")
        ks_ax.set_xlabel("uniform quantile")
        ks_ax.set_ylabel("rescaled interval")
        isi = isi[isi > 0]
        if len(isi) < 2 or rows["log_likelihood"].isna().all():
            note = rows["fit_note"].iloc[0] if len(rows) else "no intervals"
            dens_ax.text(0.5, 0.5, f"not fitted: {note}", ha="center", transform=dens_ax.transAxes)
            continue
        edges = np.linspace(np.log10(isi.min()), np.log10(isi.max()), 50)
        dens_ax.hist(np.log10(isi), bins=edges, density=True, color="#cfd6de",
                     edgecolor="white", linewidth=0.4, label="observed")
        s = np.logspace(edges[0], edges[-1], 400)
        quantiles = (np.arange(1, len(isi) + 1) - 0.5) / len(isi)
        for _, row in rows.iterrows():
            if not np.isfinite(row["log_likelihood"]):
                continue
            style = figure_style.MODEL_STYLE[row["model"]]
            pdf = hazard_models.model_pdf(row["model"], s, **_model_args(row))
            dens_ax.plot(np.log10(s), pdf * s * np.log(10), lw=1.4, **style)
            z = np.sort(hazard_models.model_cdf(row["model"], isi, **_model_args(row)))
            # the label is the table's ks_stat: one goodness of fit, computed once
            ks_ax.plot(quantiles, z, lw=1.2, **{**style, "label": f"{style['label']} "
                                                f"(KS {row['ks_stat']:.3f})"})
        band = rows["ks_band_95"].iloc[0]
        ks_ax.plot([0, 1], [0, 1], color=figure_style.INK, lw=0.8)
        ks_ax.fill_between([0, 1], [-band, 1 - band], [band, 1 + band], color="#e8ecf1",
                           label="95% band")
        decades = np.arange(np.ceil(edges[0]), np.floor(edges[-1]) + 1)
        dens_ax.set_xticks(decades, [f"{10 ** t:g}" for t in decades])
        dens_ax.set_xlim(edges[0], edges[-1])
        ks_ax.set_xlim(0, 1)
        ks_ax.set_ylim(0, 1)
        if k == 0:
            dens_ax.legend(fontsize=7)
            ks_ax.legend(fontsize=7, loc="lower right")
    height = fig.get_figheight()
    fig.suptitle(f"Refractory recovery fits, session {session} (first {len(labels)} units)",
                 x=0.01, ha="left", y=1 - 0.1 / height, va="top")
    figure_style.save(fig, output, trim=False)


WIDTH_IN, ROW_IN = 8.5, 2.3  # figure width; height of one unit's row, gap included (inches)


def _fixed_layout(fig, n_rows: int) -> None:
    """Margins and gaps in inches, set once: an automatic layout measures every label and takes
    seconds per figure, which over a cohort adds up to most of the figure jobs' time."""
    height = fig.get_figheight()
    gap, left, right, middle, top, bottom = 0.8, 0.8, 0.2, 0.8, 0.65, 0.55
    axes_h = ROW_IN - gap
    axes_w = (WIDTH_IN - left - right - middle) / 2
    fig.subplots_adjust(left=left / WIDTH_IN, right=1 - right / WIDTH_IN, top=1 - top / height,
                        bottom=bottom / height, hspace=gap / axes_h, wspace=middle / axes_w)
