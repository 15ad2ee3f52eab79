r"""Mean astronomical longitudes (Doodson variables) as functions of UTC time.

The six Doodson variables, all in degrees: :math:`\tau` mean lunar time (from lower lunar transit), :math:`s`
mean longitude of the Moon, :math:`h` of the Sun, :math:`p` of the lunar perigee, :math:`N` of the lunar
ascending node (the argument uses :math:`N' = -N`) and :math:`p_1` of the solar perigee.

The polynomials used throughout the package are "Set A", those of the Explanatory Supplement (1961) [1]_,
with :math:`d` days since 1899-12-31 12:00 UT (JD 2415020.0) and :math:`D = d/10^4`. Set B (Meeus 1998 [2]_)
is provided for cross-checks only. Mean lunar time is :math:`\tau = 15^\circ t_{UT} + h - s` with
:math:`t_{UT}` hours since 00:00 UT of the day. Times are UTC; the difference TT - UT (about a minute) is
ignored, which moves :math:`s` by about 0.01 degree, negligible for tides.

References
----------
.. [1] Explanatory Supplement to the Astronomical Ephemeris and the American Ephemeris and Nautical Almanac.
       London, U.K.: HMSO, 1961, pp. 98, 107.
.. [2] J. Meeus, Astronomical Algorithms, 2nd ed. Richmond, VA, USA: Willmann-Bell, 1998, ch. 22, 47.
.. [3] P. Schureman, Manual of Harmonic Analysis and Prediction of Tides, US C&GS Spec. Publ. 98, 1958.
"""
from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from extremes.timebase import utc_index

logger = logging.getLogger(__name__)

#: Julian date of the Set A epoch, 1899-12-31 12:00 UT
JD_EPOCH_SET_A = 2415020.0
_EPOCH = np.datetime64("1899-12-31T12:00:00", "ns")

#: names of the six Doodson variables, in the order of the Doodson multipliers
VARIABLES = ("tau", "s", "h", "p", "Nprime", "p1")

#: hourly rates of the six variables [deg/h] (Schureman 1958 [3]); N' = -N advances at +0.00220641 deg/h
RATES_DEG_PER_HOUR = np.array([14.49205211, 0.54901653, 0.04106864, 0.00464183, 0.00220641, 0.00000196])


def to_utc_index(times, *, name: str = "times") -> pd.DatetimeIndex:
    """Return ``times`` as a tz-aware UTC :class:`pandas.DatetimeIndex`; refuse naive times.

    The one rule of :func:`extremes.timebase.utc_index`.

    Raises
    ------
    DataError
        If the times carry no time zone or cannot be read as times.
    """
    return utc_index(times, name=name)


def days_since_epoch(times) -> np.ndarray:
    """Days since 1899-12-31 12:00 UT (JD 2415020.0) of tz-aware times [days]."""
    index = to_utc_index(times)
    ns = index.tz_localize(None).values.astype("datetime64[ns]")
    return (ns - _EPOCH).astype(np.int64) / 86400e9


def doodson_variables_days(d) -> np.ndarray:
    """Set A Doodson variables at ``d`` days since JD 2415020.0.

    Returns
    -------
    numpy.ndarray
        Shape ``d.shape + (6,)``: tau, s, h, p, N', p1 [deg], each in [0, 360).
    """
    d = np.asarray(d, dtype=float)
    big_d = d / 1e4
    s = 270.434164 + 13.1763965268 * d - 0.0000850 * big_d**2 + 0.000000039 * big_d**3
    h = 279.696678 + 0.9856473354 * d + 0.00002267 * big_d**2
    p = 334.329556 + 0.1114040803 * d - 0.0007739 * big_d**2 - 0.00000026 * big_d**3
    n_prime = -259.183275 + 0.0529539222 * d - 0.0001557 * big_d**2 - 0.00000005 * big_d**3
    p1 = 281.220844 + 0.0000470684 * d + 0.0000339 * big_d**2 + 0.00000007 * big_d**3
    # 15 deg x hours since 00:00 UT; the epoch is at 12:00 UT, hence the 180 deg
    hour_angle = 360.0 * np.mod(d, 1.0) + 180.0
    tau = hour_angle + h - s
    return np.mod(np.stack([tau, s, h, p, n_prime, p1], axis=-1), 360.0)


def doodson_variables(times) -> pd.DataFrame:
    """Set A mean longitudes and mean lunar time at the given UTC times.

    Parameters
    ----------
    times : array-like of tz-aware datetimes
        Instants (UTC or any tz-aware zone; converted to UTC).

    Returns
    -------
    pandas.DataFrame
        Columns ``tau, s, h, p, N, Nprime, p1`` [deg, in 0..360), indexed by the UTC times.

    Notes
    -----
    Explanatory Supplement (1961) polynomials [1]_ (METHODS sec. 1, Set A).

    References
    ----------
    .. [1] Explanatory Supplement to the Astronomical Ephemeris (1961), HMSO, pp. 98, 107.
    """
    index = to_utc_index(times)
    values = doodson_variables_days(days_since_epoch(index))
    frame = pd.DataFrame(values, index=index, columns=list(VARIABLES))
    frame.insert(4, "N", np.mod(-frame["Nprime"].to_numpy(), 360.0))
    return frame


def doodson_variables_meeus(times) -> pd.DataFrame:
    """Set B (Meeus 1998) mean longitudes, for cross-checking Set A.

    Uses T in Julian centuries from J2000.0 with UT in place of dynamical time.

    Returns
    -------
    pandas.DataFrame
        Columns ``tau, s, h, p, N, Nprime, p1`` [deg].

    References
    ----------
    .. [1] J. Meeus, Astronomical Algorithms, 2nd ed. Willmann-Bell, 1998, eqs. 47.1-47.7, 22.
    """
    index = to_utc_index(times)
    d = days_since_epoch(index)
    t = (d + JD_EPOCH_SET_A - 2451545.0) / 36525.0
    s = 218.3164477 + 481267.88123421 * t - 0.0015786 * t**2 + t**3 / 538841 - t**4 / 65194000
    m_moon = 134.9633964 + 477198.8675055 * t + 0.0087414 * t**2 + t**3 / 69699 - t**4 / 14712000
    h = 280.46646 + 36000.76983 * t + 0.0003032 * t**2
    m_sun = 357.52911 + 35999.05029 * t - 0.0001537 * t**2
    node = 125.04452 - 1934.136261 * t + 0.0020708 * t**2 + t**3 / 450000
    tau = 360.0 * np.mod(d, 1.0) + 180.0 + h - s
    out = np.mod(np.stack([tau, s, h, s - m_moon, node, -node, h - m_sun], axis=-1), 360.0)
    return pd.DataFrame(out, index=index, columns=["tau", "s", "h", "p", "N", "Nprime", "p1"])


__all__ = [
    "VARIABLES", "RATES_DEG_PER_HOUR", "JD_EPOCH_SET_A", "to_utc_index", "days_since_epoch",
    "doodson_variables_days", "doodson_variables", "doodson_variables_meeus",
]
