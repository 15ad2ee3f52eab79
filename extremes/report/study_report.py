"""The report of a study just run: its figures drawn from the study's data, then the HTML and PDF.

The figures that need the record (the record and its flags, the tide fit, the surge, each fit's
diagnostics, the methods side by side) are drawn here from the :class:`extremes.results.StudyResult`.
Everything else, text and tables, comes from the results document alone (:mod:`extremes.report.content`), so that a results folder's report can be rebuilt later
(:func:`extremes.report.assemble.refresh_report`).
"""
from __future__ import annotations

import functools
import logging
from collections.abc import Callable

import numpy as np
import pandas as pd

logger = logging.getLogger(__name__)

__all__ = ["build_study_report"]

def _draw(name: str, build: Callable) -> bytes | None:
    """Build and draw one figure job as PNG bytes (None if it fails)."""
    from extremes.report import figures

    try:
        fig = build()
        return None if fig is None else figures.to_png(fig)
    except Exception as err:  # noqa: BLE001 - a figure must never sink the report; the log says why
        logger.warning("figure %s not drawn: %s", name, err)
        return None


def _draw_all(jobs) -> dict[str, bytes]:
    """Draw every figure job, one after the other (the library starts no processes: it runs inside dask
    workers too; parallelism belongs to the caller, e.g. one study per worker in a batch)."""
    drawn = {name: _draw(name, build) for name, build in jobs}
    return {name: png for name, png in drawn.items() if png is not None}


def _fit_jobs(result, figures) -> list[tuple[str, Callable]]:
    """Diagnostics of each direct fit (annual maxima, peaks over threshold, r-largest)."""
    jobs = []
    for method in ("annual-maxima", "peaks-over-threshold", "r-largest"):
        detail = result.method_details.get(method)
        sample = getattr(detail, "sample", None)
        if detail is None or sample is None:
            continue
        if method == "r-largest" and isinstance(sample, pd.Series) and sample.index.nlevels > 1:
            # the r largest of each year, stacked by (year, rank): the largest of each year follows the
            # fitted GEV (Coles 2001, sec. 3.5), so that is what its probability and quantile plots compare
            sample = sample.groupby(level=0).max()
        values = sample.to_numpy() if hasattr(sample, "to_numpy") else np.asarray(sample)
        values = values[:, 0] if values.ndim == 2 else values
        jobs.append((f"fit_{method}", functools.partial(
            figures.fit_diagnostics_figure, values[np.isfinite(values)], result.curves[method],
            cdf=getattr(detail, "cdf", None), quantile=getattr(detail, "quantile", None),
            record_years=result.record_years, title=f"Diagnostics: {method}")))
    return jobs


def _methods_figure(result, figures):
    am = result.method_details.get("annual-maxima")
    observed = getattr(am, "sample", None)
    fig = figures.methods_comparison_figure(
        result.curves, recommended=result.recommended_method,
        observed_m=None if observed is None else np.asarray(observed, dtype=float),
        record_years=result.record_years, periods_range=(1.0, 1000.0))
    estimates = np.array([c.level_at([1.5, 1000.0]) for c in result.curves.values()])
    low, high = np.nanmin(estimates[:, 0]), np.nanmax(estimates[:, 1])
    if np.isfinite(low) and np.isfinite(high) and high > low:
        # the axis follows the estimates; wide upper bounds run off the top rather than flatten the curves
        fig.axes[0].set_ylim(low - 0.1 * (high - low), high + 0.6 * (high - low))
    return fig


def _scenario_figure(result, figures):
    slr = result.sea_level_rise
    scenarios = slr.scenarios
    epoch = result.epoch_year
    years = np.arange(0, slr.design_life_years + 1) + epoch
    rises = {name: np.asarray(scenarios.rise_since(name, years, reference_year=epoch), dtype=float)
             for name in scenarios.names}
    return figures.sea_level_rise_figure(result.curves[slr.method], years=years, rise_m=rises)


def figure_jobs(result, document: dict) -> list[tuple[str, Callable]]:
    """The figures of a study as ``(name, build)`` pairs; ``build()`` returns a matplotlib Figure."""
    from extremes.report import figures
    from extremes.report.assemble import sea_level_rise_figure_of

    qc = result.quality
    datum = result.datum
    skew = result.skew_surges
    skew_series = pd.Series(skew["skew_surge_m"].to_numpy(), index=pd.DatetimeIndex(skew["time"]))
    jobs = [
        ("record", lambda: figures.record_figure(result.record.water_level_m, flags=qc.flags, gaps=qc.gaps.copy(),
                                                 datum=datum)),
        ("tide_fit", lambda: figures.tide_fit_figure(result.level_epoch_m,
                                                     result.tide_model.predict(result.level_epoch_m.index),
                                                     datum=datum)),
        ("residual", lambda: figures.residual_figure(result.residual_m, skew_surge_m=skew_series)),
        *_fit_jobs(result, figures),
        ("methods", lambda: _methods_figure(result, figures)),
        ("sea_level_rise", lambda: sea_level_rise_figure_of(document)),
    ]
    if result.sea_level_rise.scenario_results:
        jobs.append(("sea_level_rise_scenarios", lambda: _scenario_figure(result, figures)))
    return jobs


def build_study_report(result, document: dict):
    """The report of ``result``: HTML, PDF and the figures as PNG bytes by name.

    Parameters
    ----------
    result : extremes.results.StudyResult
    document : dict
        ``result.to_dict()`` (computed once by the caller).

    Returns
    -------
    extremes.report.assemble.StudyReport
        Write it into the results folder with its ``write`` method.
    """
    from extremes.report.assemble import render_study_report

    pngs = _draw_all(figure_jobs(result, document))
    return render_study_report(document, pngs)
