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
- :func:`offsets_figure` -- the curve raised by each sea-level-rise offset, and the chance of exceeding
  today's level over the design life.

The last four live in :mod:`extremes.report.figures_levels`; the look (colour-blind safe palette, line
styles, legends under the axes) and the check that a figure's text fits are in
:mod:`extremes.report.plotstyle`.

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

import logging

import numpy as np
import pandas as pd

from extremes.errors import DataError
from extremes.report.figures_levels import (  # noqa: F401 - part of this module's interface
    fit_diagnostics_figure,
    methods_comparison_figure,
    offsets_figure,
    plotting_positions_gringorten,
    return_periods_gringorten,
    sea_level_rise_figure,
)
from extremes.report.plotstyle import MARKERS, PALETTE, legend_below, level_label, new_figure, to_png

logger = logging.getLogger(__name__)

__all__ = [
    "to_png", "plotting_positions_gringorten", "return_periods_gringorten", "decimate_min_max",
    "record_figure", "tide_fit_figure", "residual_figure", "fit_diagnostics_figure",
    "methods_comparison_figure", "sea_level_rise_figure", "offsets_figure",
]

#: flag names that mean "good sample" in a flag series
GOOD_FLAGS = ("ok", "good", "")
#: tidal bands marked on spectra: label -> centre frequency [cycles per day]
TIDAL_BANDS_CPD = {"D1": 1.0, "D2": 1.93, "D3": 2.9, "D4": 3.86, "D6": 5.8}


# ------------------------------------------------------------------------------------------------
# helpers
# ------------------------------------------------------------------------------------------------
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
    fig = new_figure(7.0, 3.4)
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
        lo, hi = lo - pad, hi + pad
    else:
        lo, hi = -1.0, 1.0
    for i, name in enumerate(sorted(set(codes[~good]))):
        rows = np.flatnonzero(codes == name)
        rows = rows[_thin(rows.size, max_points_per_flag)]
        finite = np.isfinite(values[rows])
        color, marker = PALETTE[(i + 1) % len(PALETTE)], MARKERS[(i + 1) % len(MARKERS)]
        count = int(np.sum(codes == name))
        if finite.any():
            shown = np.clip(values[rows[finite]], lo, hi)
            outside = shown != values[rows[finite]]
            ax.scatter(times[rows[finite]][~outside], shown[~outside], s=12, marker=marker, color=color, zorder=3,
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
            ax.axvspan(_utc_naive([start])[0], _utc_naive([end])[0], color="0.6", alpha=0.35, lw=0,
                       label=f"gap ({len(spans)})" if j == 0 else None)
    _time_axis(ax)
    ax.set_ylim(lo, hi)
    ax.set_ylabel(level_label(datum, "water level"))
    ax.set_title(title or "Record with quality-control flags and gaps", fontsize="medium")
    legend_below(ax, ncols=3)
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
    fig = new_figure(7.0, 6.2)
    ax_time, ax_freq = fig.subplots(2, 1)
    part = observed_m[start:stop]
    ax_time.plot(_utc_naive(part.index), part.to_numpy(), color="0.2", lw=0.9, label="observed")
    tide = predicted_m[start:stop]
    ax_time.plot(_utc_naive(tide.index), tide.to_numpy(), color=PALETTE[0], lw=0.9, ls="--",
                 label="predicted tide")
    res = residual[start:stop]
    ax_time.plot(_utc_naive(res.index), res.to_numpy(), color=PALETTE[1], lw=0.8, ls="-.", label="residual")
    _time_axis(ax_time)
    ax_time.set_ylabel(level_label(datum, "level"))
    ax_time.set_title(title or f"Tide fit: {days:g} days from {start:%Y-%m-%d %H:%M} UTC", fontsize="medium")
    ax_time.grid(True, alpha=0.3)

    freq, power = _spectrum(observed_m, segment_days=segment_days)
    ax_freq.semilogy(freq, power, color="0.2", lw=0.8, label="observed")
    freq_r, power_r = _spectrum(residual, segment_days=segment_days)
    ax_freq.semilogy(freq_r, power_r, color=PALETTE[1], lw=0.8, ls="-.", label="residual")
    top = min(freq.max(), 8.0)
    for label, centre in TIDAL_BANDS_CPD.items():
        if centre < top:
            ax_freq.axvspan(centre * 0.93, centre * 1.07, color="0.85", zorder=0)
            ax_freq.text(centre, 0.97, label, transform=ax_freq.get_xaxis_transform(), ha="center", va="top",
                         fontsize="small")
    ax_freq.set_xlim(0, top)
    ax_freq.set_xlabel("frequency [cycles per day]")
    ax_freq.set_ylabel("power spectral density [m² day]")
    ax_freq.set_title("Spectra (Welch): the residual should show no tidal bands", fontsize="medium")
    legend_below(ax_freq, ncols=4)
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
    fig = new_figure(7.0, 6.0)
    ax_time, ax_hist = fig.subplots(2, 1)
    t, v = decimate_min_max(residual_m.dropna(), max_bins=max_bins)
    ax_time.plot(t, v, color="0.35", lw=0.5, label="non-tidal residual")
    data = [residual_m.dropna().to_numpy(dtype=float)]
    labels = ["non-tidal residual"]
    if skew_surge_m is not None:
        skew_surge_m = _as_series(skew_surge_m, "skew_surge_m").dropna()
        rows = _thin(skew_surge_m.size, 20_000)
        ax_time.plot(_utc_naive(skew_surge_m.index[rows]), skew_surge_m.to_numpy(dtype=float)[rows], ".",
                     ms=2, color=PALETTE[1], label="skew surge (one per tide)")
        data.append(skew_surge_m.to_numpy(dtype=float))
        labels.append("skew surge")
    _time_axis(ax_time)
    ax_time.set_ylabel("surge [m]")
    ax_time.set_title(title or "Non-tidal residual and skew surge", fontsize="medium")
    ax_time.grid(True, alpha=0.3)
    edges = np.histogram_bin_edges(np.concatenate(data), bins=bins)
    for i, (values, label) in enumerate(zip(data, labels)):
        ax_hist.hist(values, bins=edges, density=True, histtype="step", lw=1.2,
                     color="0.35" if i == 0 else PALETTE[1], ls="-" if i == 0 else "--",
                     label=f"{label} (n={values.size})")
    ax_hist.set_yscale("log")
    ax_hist.set_xlabel("surge [m]")
    ax_hist.set_ylabel("density [1/m]")
    legend_below(ax_hist, ncols=2)
    ax_hist.grid(True, alpha=0.3)
    return fig
