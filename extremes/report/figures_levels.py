r"""Figures of return levels: one fit's diagnostics, every method side by side, and sea-level rise.

Each function takes plain data and returns a matplotlib Figure sized for the text width of an A4 or Letter
page (7 inches); legends sit under their axes (:func:`extremes.report.plotstyle.legend_below`), colours
are colour-blind safe and every series also differs by line style or marker.

References
----------
.. [1] I. I. Gringorten, "A plotting rule for extreme probability paper," *J. Geophys. Res.*, vol. 68,
   no. 3, pp. 813-814, 1963, doi:10.1029/JZ068i003p00813.
.. [2] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
   sec. 3.3.3 (probability, quantile and return-level plots).
.. [3] J. Hunter, "A simple technique for estimating an allowance for uncertain sea-level rise,"
   *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
"""
from __future__ import annotations

import logging
from collections.abc import Callable, Mapping

import numpy as np

from extremes.errors import DataError
from extremes.extremal.diagnostics import plotting_positions_gringorten  # the one set of plotting positions
from extremes.report.plotstyle import MARKERS, PALETTE, legend_below, level_label, new_figure, style

logger = logging.getLogger(__name__)

__all__ = ["plotting_positions_gringorten", "return_periods_gringorten", "fit_diagnostics_figure",
           "methods_comparison_figure", "sea_level_rise_figure", "offsets_figure"]


def return_periods_gringorten(sample, *, record_years: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    r"""Empirical return periods of a sample of extremes by Gringorten's rule [1]_.

    The ``r``-th largest of the sample (``r = 1`` the largest) gets :math:`T = (N + 0.12)/(r - 0.44)`,
    with :math:`N` the record length in years. For annual maxima :math:`N = n` and this is
    :math:`1/(1 - p_i)`; for peaks over a threshold give ``record_years``.

    Returns
    -------
    (levels, periods_years) : tuple of numpy.ndarray
        The finite sample sorted ascending [m] and the empirical return period of each [years].
    """
    values = np.asarray(sample, dtype=float)
    values = np.sort(values[np.isfinite(values)])
    n = values.size
    if n == 0:
        raise DataError("return_periods_gringorten: the sample holds no finite value")
    years = float(n if record_years is None else record_years)
    rank_from_top = n - np.arange(n)
    return values, (years + 0.12) / (rank_from_top - 0.44)


def _period_axis(ax, periods_range):
    from matplotlib.ticker import FuncFormatter

    ax.set_xscale("log")
    ax.set_xlim(*periods_range)
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    ax.set_xlabel("return period [years]")
    ax.grid(True, which="major", alpha=0.4)
    ax.grid(True, which="minor", alpha=0.15)


def _curve_distribution(curve):
    """CDF and quantile function of annual maxima implied by a 1/AEP curve."""
    lo_p = 1.0 - 1.0 / curve.periods_years[0]
    hi_p = 1.0 - 1.0 / curve.periods_years[-1]

    def cdf(z):
        return 1.0 - curve.aep_of_level(z)

    def quantile(p):
        p = np.clip(np.asarray(p, dtype=float), lo_p, hi_p)
        return curve.level_at(1.0 / (1.0 - p))

    return cdf, quantile


def _band(ax, curve, keep, color, *, alpha, label=None):
    lower, upper = curve.lower_m[keep], curve.upper_m[keep]
    if np.any(np.isfinite(lower) & np.isfinite(upper)):
        ax.fill_between(curve.periods_years[keep], lower, upper, color=color, alpha=alpha, lw=0, label=label)


def fit_diagnostics_figure(sample_m, curve, *, cdf: Callable | None = None, quantile: Callable | None = None,
                           record_years: float | None = None, periods_range=(1.0, 1000.0),
                           title: str | None = None):
    """Probability plot, quantile plot and return-level plot of one fit [2]_.

    Parameters
    ----------
    sample_m : array-like
        The fitted sample: annual maxima, or peaks over the threshold. [m]
    curve : ReturnLevelCurve
        The fit's return-level curve (with interval bounds).
    cdf, quantile : callable, optional
        The fitted distribution of the sample (e.g. a frozen ``scipy.stats`` distribution's ``cdf`` and
        ``ppf``). Default for a ``"1/AEP"`` curve: the annual-maximum distribution the curve implies. For
        rate-based curves give them, or the probability and quantile panels say they are not available.
    record_years : float, optional
        Record length for the empirical return periods of peaks (default: the sample size, right for
        annual maxima). [years]
    periods_range : (float, float)
        Period axis of the return-level plot. [years]

    Returns
    -------
    matplotlib.figure.Figure
        Three axes: probability (PP), quantile (QQ) and return-level plots. Empirical probabilities and
        periods by Gringorten's rule [1]_.
    """
    values = np.sort(np.asarray(sample_m, dtype=float))
    values = values[np.isfinite(values)]
    if values.size < 2:
        raise DataError(f"fit_diagnostics_figure: need at least two finite sample values; got {values.size}")
    if (cdf is None or quantile is None) and curve.period_definition == "1/AEP":
        default_cdf, default_quantile = _curve_distribution(curve)
        cdf = cdf or default_cdf
        quantile = quantile or default_quantile
    positions = plotting_positions_gringorten(values.size)
    fig = new_figure(7.0, 3.4)
    ax_pp, ax_qq, ax_rl = fig.subplots(1, 3)
    if cdf is not None and quantile is not None:
        model_p = np.asarray(cdf(values), dtype=float)
        ax_pp.plot(positions, model_p, "o", ms=3, color=PALETTE[0], label="sample")
        ax_pp.plot([0, 1], [0, 1], color="0.3", lw=0.8, ls="--", label="1:1 line")
        model_q = np.asarray(quantile(positions), dtype=float)
        ax_qq.plot(model_q, values, "o", ms=3, color=PALETTE[0], label="sample")
        span = [min(model_q.min(), values.min()), max(model_q.max(), values.max())]
        ax_qq.plot(span, span, color="0.3", lw=0.8, ls="--", label="1:1 line")
    else:
        for ax in (ax_pp, ax_qq):
            ax.text(0.5, 0.5, "fitted distribution\nnot supplied", ha="center", va="center", transform=ax.transAxes)
    ax_pp.set_xlabel("empirical probability")
    ax_pp.set_ylabel("model probability")
    ax_pp.set_title("Probability plot", fontsize="medium")
    ax_qq.set_xlabel("model quantile [m]")
    ax_qq.set_ylabel("empirical quantile [m]")
    ax_qq.set_title("Quantile plot", fontsize="medium")
    for ax in (ax_pp, ax_qq):
        ax.grid(True, alpha=0.3)
    keep = (curve.periods_years >= periods_range[0]) & (curve.periods_years <= periods_range[1])
    _band(ax_rl, curve, keep, PALETTE[0], alpha=0.2, label=f"{curve.confidence:.0%} interval")
    ax_rl.plot(curve.periods_years[keep], curve.level_m[keep], color=PALETTE[0], lw=1.5, label="fitted")
    levels, empirical_periods = return_periods_gringorten(values, record_years=record_years)
    ax_rl.plot(empirical_periods, levels, "s", ms=3, mfc="none", color="0.1", label="observed (Gringorten)")
    _period_axis(ax_rl, periods_range)
    ax_rl.set_ylabel(level_label(curve.datum, "level"))
    ax_rl.set_title("Return-level plot", fontsize="medium")
    legend_below(ax_rl, ncols=4)
    fig.suptitle(title or f"Diagnostics: {curve.method}", fontsize="medium")
    return fig


def methods_comparison_figure(curves, *, recommended: str | None = None, observed_m=None,
                              record_years: float | None = None, periods_range=(1.0, 10_000.0),
                              title: str | None = None):
    """Every method's return-level curve with its interval band, on a log period axis.

    Parameters
    ----------
    curves : mapping of str to ReturnLevelCurve, or iterable of ReturnLevelCurve
        The curves (keys, or each curve's ``method``, label them).
    recommended : str, optional
        Label of the recommended method (drawn thicker, marked in the legend).
    observed_m : array-like, optional
        Annual maxima to plot at Gringorten return periods [1]_. [m]
    record_years : float, optional
        Record length for ``observed_m`` when it is not one value per year. [years]
    periods_range : (float, float)
        Period axis limits. [years]

    Returns
    -------
    matplotlib.figure.Figure
        One axes; one line (colour and line style) and one band per curve, plus the observed points; the
        legend is under the axes.
    """
    if not isinstance(curves, Mapping):
        curves = {curve.method: curve for curve in curves}
    if not curves:
        raise DataError("methods_comparison_figure: expected at least one curve")
    fig = new_figure(7.0, 4.6)
    ax = fig.add_subplot()
    datum = next(iter(curves.values())).datum
    for i, (label, curve) in enumerate(curves.items()):
        look = style(i)
        keep = (curve.periods_years >= periods_range[0]) & (curve.periods_years <= periods_range[1])
        _band(ax, curve, keep, look["color"], alpha=0.10)
        best = label == recommended
        if best:  # the recommended curve: solid and thickest, whatever its place in the cycle
            look = {**look, "ls": "-"}
        ax.plot(curve.periods_years[keep], curve.level_m[keep], lw=2.8 if best else 1.3, **look,
                label=f"{label} ({curve.period_definition})" + (", recommended" if best else ""))
    if observed_m is not None:
        levels, periods = return_periods_gringorten(observed_m, record_years=record_years)
        ax.plot(periods, levels, "o", ms=3, color="0.1", label="observed annual maxima (Gringorten)")
    _period_axis(ax, periods_range)
    ax.set_ylabel(level_label(datum))
    ax.set_title(title or "Return levels of every method (bands: confidence intervals)", fontsize="medium")
    legend_below(ax, ncols=2)
    return fig


def _encounter_by_year(curve, level_m: float, rise) -> np.ndarray:
    """Chance that ``level_m`` is exceeded at least once in years 1..n, rise ``rise[y]`` in year y [3]_."""
    aep = np.minimum(curve.aep_of_level(level_m - np.asarray(rise, dtype=float)), 1.0)
    return -np.expm1(np.cumsum(np.log1p(-aep)))


def sea_level_rise_figure(curve, *, years, rise_m: Mapping, periods_years=(10.0, 100.0, 1000.0),
                          encounter_period_years: float = 100.0, title: str | None = None):
    """Return levels against year under rise scenarios, and the chance of exceeding today's level.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve (the recommended method).
    years : array-like
        Increasing calendar years at which ``rise_m`` is given. [year]
    rise_m : mapping of str to array-like
        Scenario name -> rise relative to the curve's epoch at ``years`` (e.g.
        ``SeaLevelScenarios.rise_since(name, years, reference_year=curve.epoch_year)``). [m]
    periods_years : iterable of float
        Return periods drawn on the left. [years]
    encounter_period_years : float
        Today's level whose chance of exceedance from the first year on is drawn on the right. [years]

    Returns
    -------
    matplotlib.figure.Figure
        Two axes. Left: level of each period (line style) under each scenario (colour) against year
        (offset rule [3]_). Right: probability that today's ``encounter_period_years`` level is exceeded
        at least once between the first year and each year, per scenario and without rise.
    """
    years = np.asarray(years, dtype=float)
    if years.ndim != 1 or years.size < 2 or np.any(np.diff(years) <= 0):
        raise DataError(f"sea_level_rise_figure: years must increase strictly; got {years.tolist()}")
    if not rise_m:
        raise DataError("sea_level_rise_figure: expected at least one scenario in rise_m")
    periods = np.asarray(list(periods_years), dtype=float)
    fig = new_figure(7.0, 4.2)
    ax_level, ax_prob = fig.subplots(1, 2)
    annual = np.arange(years[0], years[-1] + 1e-9, 1.0)
    level_today = float(curve.level_at(encounter_period_years))
    from matplotlib.lines import Line2D

    handles = []
    for i, (name, rise) in enumerate(rise_m.items()):
        rise = np.asarray(rise, dtype=float)
        if rise.shape != years.shape:
            raise DataError(f"sea_level_rise_figure: scenario {name!r} has {rise.size} values; expected "
                            f"{years.size} (one per year)")
        look = {"color": PALETTE[i % len(PALETTE)], "marker": MARKERS[i % len(MARKERS)], "ms": 3.5}
        for j, period in enumerate(periods):
            ax_level.plot(years, curve.level_at(period) + rise, ls=style(j)["ls"],
                          markevery=max(1, years.size // 6), **look)
        ax_prob.plot(annual, _encounter_by_year(curve, level_today, np.interp(annual, years, rise)),
                     markevery=max(1, annual.size // 6), **look)
        handles.append(Line2D([], [], **look, label=f"scenario {name}"))
    aep_now = float(curve.aep_of_level(level_today))
    ax_prob.plot(annual, -np.expm1(np.arange(1, annual.size + 1) * np.log1p(-aep_now)), color="0.35",
                 ls=(0, (1, 2)), lw=1.6)
    handles.append(Line2D([], [], color="0.35", ls=(0, (1, 2)), lw=1.6, label="no rise (right)"))
    handles.extend(Line2D([], [], color="0.2", ls=style(j)["ls"], label=f"{period:g}-year level (left)")
                   for j, period in enumerate(periods))
    ax_level.set_xlabel("year")
    ax_level.set_ylabel(level_label(curve.datum))
    ax_level.set_title("Return levels by year", fontsize="medium")
    ax_level.grid(True, alpha=0.3)
    ax_prob.set_ylim(0, 1)
    ax_prob.set_xlabel("year")
    ax_prob.set_ylabel("chance of at least one exceedance")
    ax_prob.set_title(f"Today's {encounter_period_years:g}-year level\n({level_today:.2f} m) exceeded by then",
                      fontsize="medium")
    ax_prob.grid(True, alpha=0.3)
    legend_below(ax_prob, ncols=3, handles=handles, labels=[h.get_label() for h in handles])
    if title:
        fig.suptitle(title, fontsize="medium")
    return fig


def offsets_figure(curve, *, offsets_m, design_life_years: int, accepted_risk: float,
                   encounter_period_years: float = 100.0, periods_range=(1.0, 1000.0),
                   title: str | None = None):
    """Return-level curves raised by each sea-level-rise offset, and the chance of exceeding today's level.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve (the recommended method).
    offsets_m : iterable of float
        Sea-level-rise offsets; each raises every level of the curve (offset rule [3]_). [m]
    design_life_years : int
        Years over which the chance of exceedance is drawn. [years]
    accepted_risk : float
        Accepted chance of at least one exceedance over the design life, drawn as a line.
    encounter_period_years : float
        Today's level drawn across the curves and whose chance of exceedance is drawn on the right. [years]

    Returns
    -------
    matplotlib.figure.Figure
        Two axes. Left: the curve raised by each offset, with today's ``encounter_period_years`` level as a
        horizontal line (where it crosses a raised curve is its present return period). Right: chance that
        today's level is exceeded at least once within the first n years of the life, per offset.
    """
    offsets = [float(o) for o in offsets_m]
    if not offsets:
        raise DataError("offsets_figure: expected at least one offset")
    life = int(design_life_years)
    if life < 1:
        raise DataError(f"offsets_figure: design_life_years must be >= 1; got {design_life_years}")
    fig = new_figure(7.0, 3.9)
    ax_curve, ax_prob = fig.subplots(1, 2)
    keep = (curve.periods_years >= periods_range[0]) & (curve.periods_years <= periods_range[1])
    level_today = float(curve.level_at(encounter_period_years))
    years = np.arange(1, life + 1)
    for i, offset in enumerate(offsets):
        look = style(i)
        label = "no rise" if offset == 0 else f"+{offset:g} m"
        ax_curve.plot(curve.periods_years[keep], curve.level_m[keep] + offset, lw=1.5, label=label, **look)
        ax_prob.plot(years, _encounter_by_year(curve, level_today, np.full(life, offset)), lw=1.5, **look,
                     label=label)
    ax_curve.axhline(level_today, color="0.1", lw=0.8, ls=(0, (1, 1)),
                     label=f"today's {encounter_period_years:g}-year level")
    _period_axis(ax_curve, periods_range)
    ax_curve.set_ylabel(level_label(curve.datum))
    ax_curve.set_title("Return levels raised by each offset", fontsize="medium")
    ax_prob.axhline(accepted_risk, color="0.1", lw=0.8, ls=(0, (6, 2, 1, 2)), label=f"accepted risk {accepted_risk:g}")
    ax_prob.set_xlim(1, life)
    ax_prob.set_ylim(0, 1)
    ax_prob.set_xlabel("years of the design life")
    ax_prob.set_ylabel("chance of at least one exceedance")
    ax_prob.set_title(f"Today's {encounter_period_years:g}-year level ({level_today:.2f} m)", fontsize="medium")
    ax_prob.grid(True, alpha=0.3)
    legend_below(ax_curve, ncols=4)
    if title:
        fig.suptitle(title, fontsize="medium")
    return fig
