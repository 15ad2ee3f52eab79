"""Figure of the overlap: site against reference skew surge with the fitted relation.

matplotlib is imported inside the function and no pyplot state is used (Agg canvas), as for the report's
figures (:mod:`extremes.report.figures`).
"""
from __future__ import annotations

import io

import numpy as np

__all__ = ["overlap_figure", "overlap_figure_png"]


def overlap_figure_png(result, *, dpi: int = 100) -> bytes:
    """:func:`overlap_figure` as a PNG file (bytes) at ``dpi``."""
    buffer = io.BytesIO()
    overlap_figure(result).savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
    return buffer.getvalue()


def overlap_figure(result):
    """The overlap pairs, the fitted line and +/- 2 residual standard deviations, and the lag scan.

    Parameters
    ----------
    result : extremes.transfer.site.ReferenceTransferResult

    Returns
    -------
    matplotlib.figure.Figure
        On an Agg canvas (as the report's figures, :mod:`extremes.report.figures`).
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    pairs = result.overlap.pairs
    rel = result.relation
    x = pairs["reference_skew_surge_m"].to_numpy()
    y = pairs["site_skew_surge_m"].to_numpy()
    fig = Figure(figsize=(10.0, 4.2), layout="constrained")
    FigureCanvasAgg(fig)
    ax, ax_lag = fig.subplots(1, 2, width_ratios=(2.2, 1.0))
    ax.scatter(x, y, s=6, alpha=0.45, color="#1f77b4", lw=0, label=f"{x.size} tides of the overlap")
    line = np.linspace(float(np.min(x)), float(np.max(x)), 50)
    fit = rel.predict(line)
    ax.plot(line, fit, color="#d62728", lw=1.8,
            label=f"site = {rel.intercept_m:.3f} + {rel.slope:.3f} x reference (r = {rel.correlation:.2f})")
    ax.fill_between(line, fit - 2 * rel.residual_sd_m, fit + 2 * rel.residual_sd_m, color="#d62728", alpha=0.12,
                    label=f"+/- 2 residual sd ({rel.residual_sd_m:.3f} m), kept as noise")
    ax.set_xlabel("reference skew surge [m]")
    ax.set_ylabel("site skew surge [m]")
    verdict = "transfer supported" if result.supported else "transfer NOT supported"
    ax.set_title(f"Overlap of site and reference skew surges ({verdict})")
    ax.grid(alpha=0.3)
    ax.legend(loc="upper left", fontsize=8)
    scan = result.overlap.lag_scan
    ax_lag.plot(scan["lag_hours"], scan["correlation"], marker="o", ms=3, color="#2ca02c")
    ax_lag.axvline(result.overlap.lag_hours, color="0.4", ls="--", lw=1)
    ax_lag.set_xlabel("lag of the site behind the reference [h]")
    ax_lag.set_ylabel("correlation of skew surges")
    ax_lag.set_title(f"lag chosen: {result.overlap.lag_hours:g} h")
    ax_lag.grid(alpha=0.3)
    return fig
