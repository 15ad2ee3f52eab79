r"""Mean sea level: annual means, linear trend with autocorrelation-inflated errors, adjustment to an epoch.

A trend "per year" is per calendar year (on average 365.2425 days); see :func:`decimal_year`.

References
----------
.. [5] B. D. Santer et al., "Statistical significance of trends and trend differences in layer-average
   atmospheric temperature time series," *J. Geophys. Res.*, vol. 105, no. D6, pp. 7337-7356, 2000,
   doi:10.1029/1999JD901105.
.. [6] IOC, *Manual on Sea Level Measurement and Interpretation*, IOC Manuals and Guides 14. Paris: UNESCO.
"""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from extremes._levels import _check_level_series, _sampling_interval_ns, _utc_index, _year_start_ns, decimal_year
from extremes.constants import NODAL_CYCLE_YEARS
from extremes.errors import DataError, ExtremesWarning, FitError

#: period of the lunar nodal cycle used for the optional nodal term of the MSL trend [years]
NODAL_PERIOD_YEARS = NODAL_CYCLE_YEARS

__all__ = ["NODAL_PERIOD_YEARS", "MSLTrend", "adjust_to_epoch", "annual_mean_sea_level", "decimal_year",
           "effective_sample_size", "msl_trend"]


def annual_mean_sea_level(level_m: pd.Series, *, min_completeness: float = 0.75) -> pd.DataFrame:
    """Calendar-year (UTC) means of a level record with a completeness rule.

    Parameters
    ----------
    level_m : pandas.Series
        Levels on a sorted unique UTC index, regularly sampled; NaN or absent rows are missing. [m]
    min_completeness : float, default 0.75
        Minimum share of the year's expected samples (year length / sampling interval) for a year to count [6]_.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``year``: ``mean_m`` [m] (NaN when the year fails the rule), ``n_samples``, ``n_expected``,
        ``completeness`` (0-1), ``complete`` (bool), ``mean_time_year`` (mean decimal year of the samples used,
        [years]). Every calendar year from the first to the last sample appears.
    """
    level = _check_level_series(level_m)
    if not 0.0 <= min_completeness <= 1.0:
        raise ValueError(f"min_completeness must be within [0, 1]; got {min_completeness}")
    from extremes.sampling import sample_intervals_ns

    _sampling_interval_ns(level.index)  # at least two stamps
    # each sample weighted by the time it represents (its sampling era's interval), so a year that changed
    # from hourly to 6-minute readings is neither dropped nor dominated by its 6-minute part (METHODS sec. 14)
    weight = sample_intervals_ns(level.index).astype(float)
    finite = level.notna().to_numpy()
    valid = level[finite]
    w_valid = weight[finite]
    years = np.arange(level.index[0].year, level.index[-1].year + 1)
    yr_start = _year_start_ns(years)
    yr_end = _year_start_ns(years + 1)
    if valid.size:
        vy = valid.index.year.to_numpy()
        vt = decimal_year(valid.index)
        frame = pd.DataFrame({"y": vy, "wv": w_valid * valid.to_numpy(), "wt": w_valid * vt, "w": w_valid,
                              "n": 1})
        grouped = frame.groupby("y").sum()
        sums = pd.DataFrame({"mean_m": grouped["wv"] / grouped["w"], "n_samples": grouped["n"],
                             "mean_time_year": grouped["wt"] / grouped["w"], "w": grouped["w"]})
    else:
        sums = pd.DataFrame(columns=["mean_m", "n_samples", "mean_time_year", "w"], dtype=float)
    out = sums.reindex(years)
    out.index.name = "year"
    out["n_samples"] = out["n_samples"].fillna(0).astype(int)
    represented = out["w"].fillna(0.0).to_numpy(dtype=float)
    length = (yr_end - yr_start).astype(float)
    # expected samples at the year's own (time-weighted mean) interval
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_interval = np.where(out["n_samples"] > 0, represented / np.maximum(out["n_samples"], 1), np.nan)
    out["n_expected"] = np.where(np.isfinite(mean_interval), length / mean_interval, 0.0)
    out["completeness"] = np.minimum(represented / length, 1.0)
    out["complete"] = out["completeness"] >= min_completeness
    out.loc[~out["complete"], "mean_m"] = np.nan
    out = out[["mean_m", "n_samples", "n_expected", "completeness", "complete", "mean_time_year"]]
    out.attrs = {"units": "m", "datum": level.attrs.get("datum", "unspecified"),
                 "min_completeness": float(min_completeness), "year": "calendar year, UTC"}
    return out


def effective_sample_size(n: int, r1: float) -> float:
    """Effective number of independent values of an AR(1)-like series.

    Parameters
    ----------
    n : int
        Number of values.
    r1 : float
        Lag-1 autocorrelation (clipped below at 0: negative autocorrelation is not used to shrink errors).

    Returns
    -------
    float
        :math:`n_{eff} = n (1 - r_1) / (1 + r_1)` [5]_.
    """
    r = max(float(r1), 0.0)
    if r >= 1.0:
        return 0.0
    return n * (1.0 - r) / (1.0 + r)


@dataclass(frozen=True, repr=False)
class MSLTrend:
    """Linear mean-sea-level trend fitted to annual means.

    Attributes
    ----------
    trend_m_per_year, trend_se_m_per_year : float
        Trend and its standard error (inflated for lag-1 autocorrelation when asked). [m/year]
    reference_year : float
        Decimal year at which the intercept is stated. [years]
    msl_at_reference_m, msl_at_reference_se_m : float
        Fitted MSL at ``reference_year`` and its standard error. [m]
    n_years : int
        Annual means used.
    r1 : float
        Lag-1 autocorrelation of the residuals of the fit.
    n_effective : float
        Effective number of years used for the standard errors.
    se_inflation : float
        Factor applied to the ordinary least-squares standard errors (1 when not inflated).
    nodal : bool
        Whether an 18.613-year cos/sin term was fitted.
    nodal_amplitude_m, nodal_phase_deg : float
        Amplitude [m] and phase [deg] of the nodal term (``A cos(2 pi (t - t0)/18.613 - phase)``); NaN if not fitted.
    residual_std_m : float
        Standard deviation of the residuals of the fit. [m]
    first_year, last_year : int
        Span of the annual means used. [years]
    covariance : tuple
        Covariance of (intercept, trend) after inflation. [m^2, m^2/year, m^2/year^2]
    datum : str
        Datum of the annual means.
    """

    trend_m_per_year: float
    trend_se_m_per_year: float
    reference_year: float
    msl_at_reference_m: float
    msl_at_reference_se_m: float
    n_years: int
    r1: float
    n_effective: float
    se_inflation: float
    nodal: bool
    nodal_amplitude_m: float
    nodal_phase_deg: float
    residual_std_m: float
    first_year: int
    last_year: int
    covariance: tuple
    datum: str = "unspecified"

    def __repr__(self) -> str:
        return (f"MSLTrend(trend={1000 * self.trend_m_per_year:.2f} +/- {1000 * self.trend_se_m_per_year:.2f} "
                f"mm/yr, n_years={self.n_years}, reference_year={self.reference_year:.2f}, nodal={self.nodal})")

    def msl_at(self, year: Any) -> Any:
        """Mean sea level on the linear trend at decimal year(s) ``year`` (nodal term excluded). [m]"""
        y = np.asarray(year, dtype=float)
        out = self.msl_at_reference_m + self.trend_m_per_year * (y - self.reference_year)
        return float(out) if out.ndim == 0 else out

    def msl_at_se(self, year: Any) -> Any:
        """Standard error of :meth:`msl_at` from the (inflated) covariance of intercept and trend. [m]"""
        y = np.asarray(year, dtype=float) - self.reference_year
        (caa, cab), (_, cbb) = self.covariance
        out = np.sqrt(caa + 2.0 * y * cab + y * y * cbb)
        return float(out) if out.ndim == 0 else out

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {
            "trend_m_per_year": self.trend_m_per_year, "trend_se_m_per_year": self.trend_se_m_per_year,
            "reference_year": self.reference_year, "msl_at_reference_m": self.msl_at_reference_m,
            "msl_at_reference_se_m": self.msl_at_reference_se_m, "n_years": self.n_years, "r1": self.r1,
            "n_effective": self.n_effective, "se_inflation": self.se_inflation, "nodal": self.nodal,
            "nodal_amplitude_m": None if math.isnan(self.nodal_amplitude_m) else self.nodal_amplitude_m,
            "nodal_phase_deg": None if math.isnan(self.nodal_phase_deg) else self.nodal_phase_deg,
            "residual_std_m": self.residual_std_m, "first_year": self.first_year, "last_year": self.last_year,
            "covariance": [list(r) for r in self.covariance], "datum": self.datum,
            "year": "calendar year (365 or 366 days), UTC",
        }


def msl_trend(annual_means: Any, *, nodal: bool = False, reference_year: float | None = None,
              adjust_autocorrelation: bool = True) -> MSLTrend:
    r"""Linear trend of annual mean sea level by ordinary least squares.

    Parameters
    ----------
    annual_means : pandas.DataFrame or pandas.Series
        From :func:`annual_mean_sea_level` (rows with ``complete`` False or NaN ``mean_m`` are ignored; the time
        of each mean is ``mean_time_year`` when present, else ``year + 0.5``), or a Series of annual means [m]
        indexed by (decimal) year.
    nodal : bool, default False
        Also fit :math:`c \cos(2\pi(t - t_0)/18.613) + d \sin(\ldots)`.
    reference_year : float, optional
        :math:`t_0`, the decimal year of the intercept; default the mean time of the annual means used.
    adjust_autocorrelation : bool, default True
        Inflate the standard errors for positive lag-1 autocorrelation :math:`r_1` of the residuals.

    Returns
    -------
    MSLTrend

    Raises
    ------
    FitError
        With fewer than ``p + 1`` usable years (p = 2, or 4 with ``nodal``).

    Notes
    -----
    Model :math:`y = a + b (t - t_0) [+ c\cos + d\sin]` (METHODS sec. 7; [6]_). Ordinary standard errors use
    :math:`s^2 = RSS/(n - p)`. With autocorrelation, :math:`n_{eff} = n(1 - r_1)/(1 + r_1)` and the residual
    variance is divided by :math:`n_{eff} - p` instead of :math:`n - p`, i.e. the covariance is scaled by
    :math:`(n - p)/(n_{eff} - p)` [5]_; :math:`r_1 = \sum e_i e_{i+1} / \sum e_i^2` over the residuals in year
    order. If :math:`n_{eff} \le p` the standard errors are infinite and an :class:`ExtremesWarning` is given.
    """
    if isinstance(annual_means, pd.DataFrame):
        df = annual_means
        if "mean_m" not in df.columns:
            raise DataError("annual_means lacks column 'mean_m'; expected the table of annual_mean_sea_level")
        use = np.isfinite(df["mean_m"].to_numpy(dtype=float))
        if "complete" in df.columns:
            use &= df["complete"].to_numpy(dtype=bool)
        y = df["mean_m"].to_numpy(dtype=float)[use]
        if "mean_time_year" in df.columns:
            t = df["mean_time_year"].to_numpy(dtype=float)[use]
        else:
            t = np.asarray(df.index, dtype=float)[use] + 0.5
        datum = str(df.attrs.get("datum", "unspecified"))
    elif isinstance(annual_means, pd.Series):
        use = np.isfinite(annual_means.to_numpy(dtype=float))
        y = annual_means.to_numpy(dtype=float)[use]
        t = np.asarray(annual_means.index, dtype=float)[use]
        datum = str(annual_means.attrs.get("datum", "unspecified"))
    else:
        raise DataError(f"annual_means must be a DataFrame or Series; got {type(annual_means).__name__}")
    order = np.argsort(t)
    t, y = t[order], y[order]
    p = 4 if nodal else 2
    n = int(y.size)
    if n < p + 1:
        raise FitError(f"msl_trend needs at least {p + 1} complete annual means (nodal={nodal}); got {n}")
    t0 = float(np.mean(t)) if reference_year is None else float(reference_year)
    columns = [np.ones(n), t - t0]
    if nodal:
        w = 2.0 * np.pi * (t - t0) / NODAL_PERIOD_YEARS
        columns += [np.cos(w), np.sin(w)]
    x = np.column_stack(columns)
    beta, _, rank, _ = np.linalg.lstsq(x, y, rcond=None)
    if rank < p:
        raise FitError(f"msl_trend design matrix is rank {rank} < {p}; annual means span too short a time")
    resid = y - x @ beta
    rss = float(resid @ resid)
    s2 = rss / (n - p)
    cov = s2 * np.linalg.inv(x.T @ x)
    r1 = float(np.sum(resid[:-1] * resid[1:]) / rss) if rss > 0 else 0.0
    n_eff = effective_sample_size(n, r1) if adjust_autocorrelation else float(n)
    if adjust_autocorrelation and r1 > 0:
        if n_eff <= p:
            warnings.warn(f"msl_trend: effective sample size {n_eff:.2f} <= {p} parameters (r1 = {r1:.2f}); "
                          "standard errors are infinite", ExtremesWarning, stacklevel=2)
            inflation = float("inf")
        else:
            inflation = math.sqrt((n - p) / (n_eff - p))
    else:
        inflation = 1.0
    cov = cov * inflation ** 2 if math.isfinite(inflation) else np.full_like(cov, np.inf)
    if nodal:
        amp = float(math.hypot(beta[2], beta[3]))
        phase = float(np.degrees(np.arctan2(beta[3], beta[2])) % 360.0)
    else:
        amp = phase = float("nan")
    return MSLTrend(
        trend_m_per_year=float(beta[1]), trend_se_m_per_year=float(math.sqrt(cov[1, 1])), reference_year=t0,
        msl_at_reference_m=float(beta[0]), msl_at_reference_se_m=float(math.sqrt(cov[0, 0])), n_years=n,
        r1=r1, n_effective=float(n_eff), se_inflation=float(inflation), nodal=bool(nodal),
        nodal_amplitude_m=amp, nodal_phase_deg=phase, residual_std_m=float(math.sqrt(rss / n)),
        first_year=int(math.floor(t[0])), last_year=int(math.floor(t[-1])),
        covariance=((float(cov[0, 0]), float(cov[0, 1])), (float(cov[1, 0]), float(cov[1, 1]))), datum=datum)


def adjust_to_epoch(series_m: pd.Series, trend: MSLTrend | float, epoch_year: float) -> pd.Series:
    """State a level series at the mean sea level of an epoch.

    Parameters
    ----------
    series_m : pandas.Series
        Levels (or residuals) on a tz-aware UTC index. [m]
    trend : MSLTrend or float
        The MSL trend, or its rate. [m/year]
    epoch_year : float
        Decimal year of the epoch. [years]

    Returns
    -------
    pandas.Series
        ``series_m + trend * (epoch_year - decimal_year(t))``: every value moved along the linear MSL trend to
        the epoch (METHODS sec. 7). ``attrs["epoch_year"]`` records the epoch.
    """
    if not isinstance(series_m, pd.Series):
        raise DataError(f"series_m must be a pandas Series; got {type(series_m).__name__}")
    index = _utc_index(series_m.index, "series_m")
    rate = float(trend.trend_m_per_year) if isinstance(trend, MSLTrend) else float(trend)
    epoch = float(epoch_year)
    if not (math.isfinite(rate) and math.isfinite(epoch)):
        raise ValueError(f"trend and epoch_year must be finite; got {rate} m/year and {epoch_year}")
    shift = rate * (epoch - decimal_year(index))
    out = pd.Series(series_m.to_numpy(dtype=float) + shift, index=index, name=series_m.name)
    out.index.name = series_m.index.name
    out.attrs = {**series_m.attrs, "epoch_year": epoch, "msl_trend_m_per_year": rate}
    return out
