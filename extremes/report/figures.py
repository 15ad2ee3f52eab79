r"""Figures of a study: one function per figure, each taking plain data and returning a matplotlib Figure.

matplotlib is imported inside the functions (so importing this module is cheap) and no pyplot state is
used: every figure is a :class:`matplotlib.figure.Figure` rendered by the Agg canvas in :func:`to_png`.
Times are plotted in UTC. Long series are decimated for plotting (minimum and maximum per time bin), so a
record of millions of samples plots quickly and its extremes stay visible.

Figures
-------
- :func:`record_figure` -- the record with its QC flags and gaps.
- :func:`tide_fit_figure` -- observed against predicted tide over a sample fortnight, and spectra of the
  observed level and of the residual with the tidal bands marked.
- :func:`residual_figure` -- non-tidal residual and skew surge series and their histograms.
- :func:`fit_diagnostics_figure` -- probability plot, quantile plot and return-level plot of one fit.
- :func:`methods_comparison_figure` -- every method's return-level curve with its interval band.
- :func:`sea_level_rise_figure` -- return levels against year under rise scenarios, and the chance of
  exceeding today's level during the years to come.

References
----------
.. [1] I. I. Gringorten, "A plotting rule for extreme probability paper," *J. Geophys. Res.*, vol. 68,
   no. 3, pp. 813-814, 1963, doi:10.1029/JZ068i003p00813.
.. [2] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
   sec. 3.3.3 (probability, quantile and return-level plots).
.. [3] P. D. Welch, "The use of fast Fourier transform for the estimation of power spectra," *IEEE Trans.
   Audio Electroacoust.*, vol. 15, no. 2, pp. 70-73, 1967, doi:10.1109/TAU.1967.1161901.
.. [4] J. Hunter, "A simple technique for estimating an allowance for uncertain sea-level rise,"
   *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
"""
from __future__ import annotations

import io
import logging
from collections.abc import Callable, Mapping

import numpy as np
import pandas as pd

from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = [
    "to_png", "plotting_positions_gringorten", "return_periods_gringorten", "decimate_min_max",
    "record_figure", "tide_fit_figure", "residual_figure", "fit_diagnostics_figure",
    "methods_comparison_figure", "sea_level_rise_figure",
]

#: flag names that mean "good sample" in a flag series
GOOD_FLAGS = ("ok", "good", "")
#: tidal bands marked on spectra: label -> centre frequency [cycles per day]
TIDAL_BANDS_CPD = {"D1": 1.0, "D2": 1.93, "D3": 2.9, "D4": 3.86, "D6": 5.8}
_PALETTE = ("#1f77b4", "#d62728", "#2ca02c", "#9467bd", "#ff7f0e", "#8c564b", "#e377c2", "#17becf")


# ------------------------------------------------------------------------------------------------
# helpers
# ------------------------------------------------------------------------------------------------
def _figure(width_in: float, height_in: float):
    from matplotlib.figure import Figure

    return Figure(figsize=(width_in, height_in), layout="constrained")


def to_png(fig, *, dpi: int = 100) -> bytes:
    """PNG bytes of ``fig`` (Agg renderer; about 100 dots per inch keeps files small)."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
    return buffer.getvalue()


def plotting_positions_gringorten(n: int) -> np.ndarray:
    r"""Gringorten plotting positions [1]_: :math:`p_i = (i - 0.44)/(n + 0.12)`, i = 1..n (ascending).

    Non-exceedance probabilities for the sample sorted in ascending order.
    """
    n = int(n)
    if n < 1:
        raise DataError(f"plotting positions need at least one value; got n={n}")
    return (np.arange(1, n + 1) - 0.44) / (n + 0.12)


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
    values = np.sort(np.asarray(sample, dtype=float)[np.isfinite(np.asarray(sample, dtype=float))])
    n = values.size
    if n == 0:
        raise DataError("return_periods_gringorten: the sample holds no finite value")
    years = float(n if record_years is None else record_years)
    rank_from_top = n - np.arange(n)
    return values, (years + 0.12) / (rank_from_top - 0.44)


def _utc_naive(index) -> np.ndarray:
    idx = pd.DatetimeIndex(index)
    if idx.tz is None:
        raise DataError("figure data: times must be timezone-aware UTC; got naive time stamps")
    return idx.tz_convert("UTC").tz_localize(None).to_numpy()


def _as_series(series, name: str) -> pd.Series:
    if not isinstance(series, pd.Series) or not isinstance(series.index, pd.DatetimeIndex):
        raise DataError(f"{name} must be a pandas Series with a DatetimeIndex (UTC); got {type(series).__name__}")
    if series.index.tz is None:
        raise DataError(f"{name}: times must be timezone-aware UTC; got naive time stamps")
    return series


def decimate_min_max(series: pd.Series, *, max_bins: int = 2000) -> tuple[np.ndarray, np.ndarray]:
    """Minimum and maximum per time bin, for plotting long series.

    Parameters
    ----------
    series : pandas.Series
        Values on a tz-aware DatetimeIndex (any order; NaN ignored).
    max_bins : int, keyword-only
        Number of equal time bins; series with at most ``2 * max_bins`` values are returned as they are.

    Returns
    -------
    (times, values) : tuple of numpy.ndarray
        Naive UTC ``datetime64`` times and values, two points per bin (minimum then maximum); empty bins
        give NaN so that lines break across gaps.
    """
    series = _as_series(series, "series").sort_index()
    times = _utc_naive(series.index)
    values = series.to_numpy(dtype=float)
    if values.size <= 2 * max_bins:
        return times, values
    t = times.astype("datetime64[ns]").astype(np.int64).astype(float)
    t0, t1 = t[0], t[-1]
    width = (t1 - t0) / max_bins if t1 > t0 else 1.0
    bins = np.clip(((t - t0) / width).astype(np.int64), 0, max_bins - 1)
    grouped = pd.Series(values).groupby(bins)
    lo = grouped.min().reindex(range(max_bins)).to_numpy()
    hi = grouped.max().reindex(range(max_bins)).to_numpy()
    left = t0 + np.arange(max_bins) * width
    out_t = np.column_stack([left + 0.25 * width, left + 0.75 * width]).ravel()
    out_v = np.column_stack([lo, hi]).ravel()
    return out_t.astype(np.int64).astype("datetime64[ns]"), out_v


def _thin(n: int, max_points: int) -> np.ndarray:
    return np.arange(n) if n <= max_points else np.linspace(0, n - 1, max_points).round().astype(int)


def _time_axis(ax):
    import matplotlib.dates as mdates

    locator = mdates.AutoDateLocator()
    ax.xaxis.set_major_locator(locator)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
    ax.set_xlabel("time (UTC)")


def _period_axis(ax, periods_range):
    from matplotlib.ticker import FuncFormatter

    ax.set_xscale("log")
    ax.set_xlim(*periods_range)
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    ax.set_xlabel("return period [years]")
    ax.grid(True, which="major", alpha=0.4)
    ax.grid(True, which="minor", alpha=0.15)


# ------------------------------------------------------------------------------------------------
# (1) the record
# ------------------------------------------------------------------------------------------------
def record_figure(level_m: pd.Series, *, flags=None, gaps=None, datum: str = "unspecified",
                  title: str | None = None, max_bins: int = 2000, max_points_per_flag: int = 2000):
    """The record as read, with the samples QC flagged marked by flag and the gaps shaded.

    Parameters
    ----------
    level_m : pandas.Series
        Water level as read (rows in file order; tz-aware UTC index). [m]
    flags : pandas.Series or array-like, optional
        Flag of each row, aligned by position with ``level_m`` (e.g. ``QualityReport.flags``); ``ok`` marks a
        good sample. Flagged rows without a value (missing, sentinel) are marked along the bottom edge.
    gaps : pandas.DataFrame or iterable of (start, end), optional
        Spans with no reading (``QualityReport.gaps``: columns ``start``, ``end``).
    datum : str
        Datum name for the axis label.
    title : str, optional
    max_bins : int
        Time bins of the min/max decimation of the good samples.
    max_points_per_flag : int
        Most markers drawn per flag (evenly thinned beyond).

    Returns
    -------
    matplotlib.figure.Figure
        One axes: a line (good samples), one marker set per flag, one shaded span per gap.
    """
    import matplotlib.transforms as mtransforms

    level_m = _as_series(level_m, "level_m")
    values = level_m.to_numpy(dtype=float)
    if flags is None:
        codes = np.full(values.size, "ok", dtype=object)
    else:
        codes = np.asarray(pd.Series(flags).astype(object).fillna("").astype(str).to_numpy(), dtype=object)
        if codes.size != values.size:
            raise DataError(f"record_figure: flags has {codes.size} rows; expected {values.size} (one per row of "
                            f"level_m)")
    good = np.isin(codes, GOOD_FLAGS)
    fig = _figure(10, 3.6)
    ax = fig.add_subplot()
    good_series = pd.Series(values[good], index=level_m.index[good])
    good_series = good_series[~good_series.index.duplicated()]
    t, v = decimate_min_max(good_series, max_bins=max_bins)
    ax.plot(t, v, color="0.25", lw=0.6, label=f"level ({int(good.sum())} good samples)")
    times = _utc_naive(level_m.index)
    bottom = mtransforms.blended_transform_factory(ax.transData, ax.transAxes)
    # the axis follows the good samples; flagged values far outside (e.g. a missing-value code read as a
    # level) are drawn at the axis edge so that the record stays readable
    good_values = good_series.to_numpy(dtype=float)
    if np.isfinite(good_values).any():
        lo, hi = np.nanmin(good_values), np.nanmax(good_values)
        pad = 0.1 * max(hi - lo, 0.1)
        lo, hi = lo - pad, hi + 4 * pad  # headroom for the legend
    else:
        lo, hi = -1.0, 1.0
    for i, name in enumerate(sorted(set(codes[~good]))):
        rows = np.flatnonzero(codes == name)
        rows = rows[_thin(rows.size, max_points_per_flag)]
        finite = np.isfinite(values[rows])
        color = _PALETTE[(i + 1) % len(_PALETTE)]
        count = int(np.sum(codes == name))
        if finite.any():
            shown = np.clip(values[rows[finite]], lo, hi)
            outside = shown != values[rows[finite]]
            ax.scatter(times[rows[finite]][~outside], shown[~outside], s=12, marker="x", color=color, zorder=3,
                       label=f"{name} ({count})")
            if outside.any():
                ax.scatter(times[rows[finite]][outside], shown[outside], s=18, marker="^", color=color, zorder=3,
                           clip_on=False, label=f"{name} beyond the axis (at the edge)")
        if (~finite).any():
            ax.scatter(times[rows[~finite]], np.full(int((~finite).sum()), 0.02), s=20, marker="|", color=color,
                       transform=bottom, zorder=3, label=f"{name} ({count}, no value)")
    if gaps is not None:
        spans = (list(zip(gaps["start"], gaps["end"])) if isinstance(gaps, pd.DataFrame) else list(gaps))
        for j, (start, end) in enumerate(spans):
            ax.axvspan(_utc_naive([start])[0], _utc_naive([end])[0], color="orange", alpha=0.25, lw=0,
                       label=f"gap ({len(spans)})" if j == 0 else None)
    _time_axis(ax)
    ax.set_ylim(lo, hi)
    ax.set_ylabel(f"water level [m, {datum}]")
    ax.set_title(title or "Record with quality-control flags and gaps")
    ax.legend(loc="upper left", fontsize="small", ncols=3)
    ax.grid(True, alpha=0.3)
    return fig


# ------------------------------------------------------------------------------------------------
# (2) the tide fit
# ------------------------------------------------------------------------------------------------
def _regular(series: pd.Series) -> tuple[np.ndarray, float]:
    """Values on a regular grid (median spacing; gaps linearly filled) and the spacing [s]."""
    series = series.sort_index()
    series = series[~series.index.duplicated()].dropna()
    if series.size < 16:
        raise DataError(f"spectrum: need at least 16 finite values; got {series.size}")
    step = pd.Series(series.index).diff().median()
    grid = pd.date_range(series.index[0], series.index[-1], freq=step)
    regular = series.reindex(series.index.union(grid)).interpolate(method="time").reindex(grid)
    return regular.to_numpy(dtype=float), step.total_seconds()


def _spectrum(series: pd.Series, *, segment_days: float) -> tuple[np.ndarray, np.ndarray]:
    from scipy.signal import welch

    values, step_s = _regular(series)
    fs = 86400.0 / step_s  # samples per day -> frequency in cycles per day
    nperseg = int(min(values.size, max(16, round(segment_days * fs))))
    freq, power = welch(values - np.nanmean(values), fs=fs, nperseg=nperseg, detrend="linear")
    return freq[1:], power[1:]


def tide_fit_figure(observed_m: pd.Series, predicted_m: pd.Series, *, start=None, days: float = 14.0,
                    datum: str = "unspecified", segment_days: float = 32.0, title: str | None = None):
    """Observed level against the predicted tide over a sample fortnight, and the spectra.

    Parameters
    ----------
    observed_m, predicted_m : pandas.Series
        Observed level and predicted tide on tz-aware UTC indexes (the prediction at the observed times). [m]
    start : timestamp, optional
        Start of the window shown; default: the window centred on the highest observed level.
    days : float
        Window length (default 14, a spring-neap cycle). [days]
    datum : str
        Datum name for the axis label.
    segment_days : float
        Segment length of Welch's spectrum estimate [3]_ (gaps are filled linearly first). [days]

    Returns
    -------
    matplotlib.figure.Figure
        Two axes: observed, predicted and residual in the window; power spectral density of the observed
        level and of the residual (log scale) against frequency in cycles per day with the tidal bands
        (diurnal D1 to sixth-diurnal D6) shaded.
    """
    observed_m = _as_series(observed_m, "observed_m").sort_index()
    predicted_m = _as_series(predicted_m, "predicted_m").sort_index()
    observed_m = observed_m[~observed_m.index.duplicated()]
    predicted_m = predicted_m[~predicted_m.index.duplicated()]
    residual = (observed_m - predicted_m.reindex(observed_m.index)).dropna()
    window = pd.Timedelta(days=days)
    if start is None:
        peak = observed_m.idxmax()
        start = max(observed_m.index[0], min(peak - window / 2, observed_m.index[-1] - window))
    start = pd.Timestamp(start)
    if start.tzinfo is None:
        raise DataError("tide_fit_figure: start must be timezone-aware UTC; got a naive time")
    stop = start + window
    fig = _figure(10, 6.5)
    ax_time, ax_freq = fig.subplots(2, 1)
    part = observed_m[start:stop]
    ax_time.plot(_utc_naive(part.index), part.to_numpy(), color="0.2", lw=0.9, label="observed")
    tide = predicted_m[start:stop]
    ax_time.plot(_utc_naive(tide.index), tide.to_numpy(), color=_PALETTE[0], lw=0.9, label="predicted tide")
    res = residual[start:stop]
    ax_time.plot(_utc_naive(res.index), res.to_numpy(), color=_PALETTE[1], lw=0.8, label="residual")
    _time_axis(ax_time)
    ax_time.set_ylabel(f"level [m, {datum}]")
    ax_time.set_title(title or f"Tide fit: {days:g} days from {start:%Y-%m-%d %H:%M} UTC")
    ax_time.legend(loc="upper right", fontsize="small", ncols=3)
    ax_time.grid(True, alpha=0.3)

    freq, power = _spectrum(observed_m, segment_days=segment_days)
    ax_freq.semilogy(freq, power, color="0.2", lw=0.8, label="observed")
    freq_r, power_r = _spectrum(residual, segment_days=segment_days)
    ax_freq.semilogy(freq_r, power_r, color=_PALETTE[1], lw=0.8, label="residual")
    top = min(freq.max(), 8.0)
    for label, centre in TIDAL_BANDS_CPD.items():
        if centre < top:
            ax_freq.axvspan(centre * 0.93, centre * 1.07, color="0.85", zorder=0)
            ax_freq.text(centre, 0.97, label, transform=ax_freq.get_xaxis_transform(), ha="center", va="top",
                         fontsize="small")
    ax_freq.set_xlim(0, top)
    ax_freq.set_xlabel("frequency [cycles per day]")
    ax_freq.set_ylabel("power spectral density [m² day]")
    ax_freq.set_title("Spectra (Welch): tidal bands should be removed from the residual")
    ax_freq.legend(loc="upper right", fontsize="small")
    return fig


# ------------------------------------------------------------------------------------------------
# (3) residual and skew surge
# ------------------------------------------------------------------------------------------------
def residual_figure(residual_m: pd.Series, *, skew_surge_m: pd.Series | None = None, title: str | None = None,
                    max_bins: int = 2000, bins: int = 60):
    """Non-tidal residual and skew surge: time series and histograms.

    Parameters
    ----------
    residual_m : pandas.Series
        Non-tidal residual on a tz-aware UTC index. [m]
    skew_surge_m : pandas.Series, optional
        Skew surge of each tidal cycle, indexed by the predicted high-water time. [m]

    Returns
    -------
    matplotlib.figure.Figure
        Two axes: the series (residual decimated, skew surges as points) and their histograms (density,
        log scale so that the tails show).
    """
    residual_m = _as_series(residual_m, "residual_m")
    fig = _figure(10, 6.0)
    ax_time, ax_hist = fig.subplots(2, 1)
    t, v = decimate_min_max(residual_m.dropna(), max_bins=max_bins)
    ax_time.plot(t, v, color="0.35", lw=0.5, label="non-tidal residual")
    data = [residual_m.dropna().to_numpy(dtype=float)]
    labels = ["non-tidal residual"]
    if skew_surge_m is not None:
        skew_surge_m = _as_series(skew_surge_m, "skew_surge_m").dropna()
        rows = _thin(skew_surge_m.size, 20_000)
        ax_time.plot(_utc_naive(skew_surge_m.index[rows]), skew_surge_m.to_numpy(dtype=float)[rows], ".",
                     ms=2, color=_PALETTE[1], label="skew surge")
        data.append(skew_surge_m.to_numpy(dtype=float))
        labels.append("skew surge")
    _time_axis(ax_time)
    ax_time.set_ylabel("surge [m]")
    ax_time.set_title(title or "Non-tidal residual and skew surge")
    ax_time.legend(loc="upper left", fontsize="small")
    ax_time.grid(True, alpha=0.3)
    edges = np.histogram_bin_edges(np.concatenate(data), bins=bins)
    for i, (values, label) in enumerate(zip(data, labels)):
        ax_hist.hist(values, bins=edges, density=True, histtype="step", lw=1.2,
                     color="0.35" if i == 0 else _PALETTE[1], label=f"{label} (n={values.size})")
    ax_hist.set_yscale("log")
    ax_hist.set_xlabel("surge [m]")
    ax_hist.set_ylabel("density [1/m]")
    ax_hist.legend(loc="upper right", fontsize="small")
    ax_hist.grid(True, alpha=0.3)
    return fig


# ------------------------------------------------------------------------------------------------
# (4) fit diagnostics
# ------------------------------------------------------------------------------------------------
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
    fig = _figure(12, 4.0)
    ax_pp, ax_qq, ax_rl = fig.subplots(1, 3)
    if cdf is not None and quantile is not None:
        model_p = np.asarray(cdf(values), dtype=float)
        ax_pp.plot(positions, model_p, "o", ms=3, color=_PALETTE[0], label="sample")
        ax_pp.plot([0, 1], [0, 1], color="0.4", lw=0.8, label="1:1")
        model_q = np.asarray(quantile(positions), dtype=float)
        ax_qq.plot(model_q, values, "o", ms=3, color=_PALETTE[0], label="sample")
        span = [min(model_q.min(), values.min()), max(model_q.max(), values.max())]
        ax_qq.plot(span, span, color="0.4", lw=0.8, label="1:1")
    else:
        for ax in (ax_pp, ax_qq):
            ax.text(0.5, 0.5, "fitted distribution\nnot supplied", ha="center", va="center", transform=ax.transAxes)
    ax_pp.set_xlabel("empirical probability (Gringorten)")
    ax_pp.set_ylabel("model probability")
    ax_pp.set_title("Probability plot")
    ax_qq.set_xlabel("model quantile [m]")
    ax_qq.set_ylabel("empirical quantile [m]")
    ax_qq.set_title("Quantile plot")
    for ax in (ax_pp, ax_qq):
        ax.grid(True, alpha=0.3)
    keep = (curve.periods_years >= periods_range[0]) & (curve.periods_years <= periods_range[1])
    periods = curve.periods_years[keep]
    if np.any(np.isfinite(curve.lower_m[keep]) & np.isfinite(curve.upper_m[keep])):
        ax_rl.fill_between(periods, curve.lower_m[keep], curve.upper_m[keep], color=_PALETTE[0], alpha=0.2, lw=0,
                           label=f"{curve.confidence:.0%} interval")
    ax_rl.plot(periods, curve.level_m[keep], color=_PALETTE[0], lw=1.5, label="fitted")
    levels, empirical_periods = return_periods_gringorten(values, record_years=record_years)
    ax_rl.plot(empirical_periods, levels, "o", ms=3, color="0.2", label="observed (Gringorten)")
    _period_axis(ax_rl, periods_range)
    ax_rl.set_ylabel(f"return level [m, {curve.datum}]")
    ax_rl.set_title("Return-level plot")
    ax_rl.legend(loc="upper left", fontsize="small")
    fig.suptitle(title or f"Diagnostics: {curve.method}")
    return fig


# ------------------------------------------------------------------------------------------------
# (5) all methods
# ------------------------------------------------------------------------------------------------
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
        One axes; one line and one band per curve (plus the observed points).
    """
    if not isinstance(curves, Mapping):
        curves = {curve.method: curve for curve in curves}
    if not curves:
        raise DataError("methods_comparison_figure: expected at least one curve")
    fig = _figure(9, 5.5)
    ax = fig.add_subplot()
    datum = next(iter(curves.values())).datum
    for i, (label, curve) in enumerate(curves.items()):
        color = _PALETTE[i % len(_PALETTE)]
        keep = (curve.periods_years >= periods_range[0]) & (curve.periods_years <= periods_range[1])
        periods = curve.periods_years[keep]
        if np.any(np.isfinite(curve.lower_m[keep]) & np.isfinite(curve.upper_m[keep])):
            ax.fill_between(periods, curve.lower_m[keep], curve.upper_m[keep], color=color, alpha=0.12, lw=0)
        best = label == recommended
        ax.plot(periods, curve.level_m[keep], color=color, lw=2.4 if best else 1.3,
                label=f"{label} ({curve.period_definition})" + (" - recommended" if best else ""))
    if observed_m is not None:
        levels, periods = return_periods_gringorten(observed_m, record_years=record_years)
        ax.plot(periods, levels, "o", ms=3, color="0.2", label="observed (Gringorten)")
    _period_axis(ax, periods_range)
    ax.set_ylabel(f"still-water level [m, {datum}]")
    ax.set_title(title or "Return levels of every method (bands: confidence intervals)")
    ax.legend(loc="upper left", fontsize="small")
    return fig


# ------------------------------------------------------------------------------------------------
# (6) sea-level rise
# ------------------------------------------------------------------------------------------------
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
        (offset rule [4]_). Right: probability that today's ``encounter_period_years`` level is exceeded
        at least once between the first year and each year, per scenario and without rise.
    """
    years = np.asarray(years, dtype=float)
    if years.ndim != 1 or years.size < 2 or np.any(np.diff(years) <= 0):
        raise DataError(f"sea_level_rise_figure: years must increase strictly; got {years.tolist()}")
    if not rise_m:
        raise DataError("sea_level_rise_figure: expected at least one scenario in rise_m")
    periods = np.asarray(list(periods_years), dtype=float)
    styles = ("-", "--", ":", "-.")
    fig = _figure(11, 4.5)
    ax_level, ax_prob = fig.subplots(1, 2)
    annual = np.arange(years[0], years[-1] + 1e-9, 1.0)
    level_today = float(curve.level_at(encounter_period_years))
    for i, (name, rise) in enumerate(rise_m.items()):
        rise = np.asarray(rise, dtype=float)
        if rise.shape != years.shape:
            raise DataError(f"sea_level_rise_figure: scenario {name!r} has {rise.size} values; expected "
                            f"{years.size} (one per year)")
        color = _PALETTE[i % len(_PALETTE)]
        for j, period in enumerate(periods):
            ax_level.plot(years, curve.level_at(period) + rise, color=color, ls=styles[j % len(styles)],
                          label=f"{name}, {period:g}-year")
        annual_rise = np.interp(annual, years, rise)
        aep = curve.aep_of_level(level_today - annual_rise)
        ax_prob.plot(annual, -np.expm1(np.cumsum(np.log1p(-np.minimum(aep, 1.0)))), color=color, label=name)
    aep_now = float(curve.aep_of_level(level_today))
    ax_prob.plot(annual, -np.expm1(np.arange(1, annual.size + 1) * np.log1p(-aep_now)), color="0.4", ls="--",
                 label="no rise")
    ax_level.set_xlabel("year")
    ax_level.set_ylabel(f"still-water level [m, {curve.datum}]")
    ax_level.set_title("Return levels under sea-level rise")
    ax_level.legend(fontsize="x-small", ncols=max(1, len(rise_m)), loc="upper left")
    ax_level.grid(True, alpha=0.3)
    ax_prob.set_ylim(0, 1)
    ax_prob.set_xlabel("year")
    ax_prob.set_ylabel("probability of at least one exceedance")
    ax_prob.set_title(f"Today's {encounter_period_years:g}-year level ({level_today:.2f} m): exceeded by then")
    ax_prob.legend(fontsize="small", loc="upper left")
    ax_prob.grid(True, alpha=0.3)
    if title:
        fig.suptitle(title)
    return fig
