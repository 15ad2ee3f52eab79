r"""Harmonic tide prediction and least-squares harmonic analysis.

Conventions: times UTC; phases are Greenwich phase lags G relative to the equilibrium argument V (Set A
astronomy, :mod:`extremes.tide.astronomy`) and nodal phase u, so that the tide is

.. math:: \eta(t) = Z_0 + \sum_j f_j(t) H_j \cos(V_j(t) + u_j(t) - G_j)

with f, u evaluated at each time [1]_, [2]_.

References
----------
.. [1] P. Schureman, Manual of Harmonic Analysis and Prediction of Tides, US C&GS Spec. Publ. 98, 1958.
.. [2] D. T. Pugh, Tides, Surges and Mean Sea-Level. Chichester, U.K.: Wiley, 1987, ch. 4.
.. [3] G. Godin, The Analysis of Tides. Toronto, ON, Canada: Univ. Toronto Press, 1972.
"""
from __future__ import annotations

import contextlib
import contextvars
import hashlib
import json
import logging
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import scipy.linalg
import scipy.linalg.blas

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError, ExtremesWarning, FitError
from extremes.outputs import write_text_atomic
from extremes.tide.astronomy import days_since_epoch, doodson_variables_days, to_utc_index
from extremes.tide.constituents import (
    DEFAULT_INFERRED,
    EQUILIBRIUM_INFERENCE,
    doodson_matrix,
    get_constituent,
    select_constituents,
)
from extremes.tide.nodal import family_factors, nodal_exponents
from extremes.timebase import level_series

logger = logging.getLogger(__name__)

#: samples per block when building design matrices or predictions (memory ~ CHUNK x constituents)
CHUNK = 100_000
_RAD = np.pi / 180.0


class _Basis:
    """Precomputed Doodson vectors, offsets and nodal exponents of a list of constituents."""

    def __init__(self, names):
        self.names = [get_constituent(n).name for n in names]
        self.doodson, self.offset = doodson_matrix(self.names)
        self.f_pow, self.u_mul = nodal_exponents(self.names)
        self.phase_matrix = np.vstack([self.doodson.T, self.u_mul, self.offset[None, :]]) * _RAD
        self.needs_perigee = "L2" in {fam for n in self.names for fam, _ in get_constituent(n).nodal_f}

    def phase_and_f(self, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Phase V + u [rad] and nodal factor f, both of shape (len(d), m), at ``d`` days since JD 2415020.

        V is evaluated at each time. The nodal terms are evaluated exactly once a day (at 12:00 UT) and
        interpolated linearly in between (N moves 0.053 deg a day: errors below 1e-5 deg in u and 1e-6 in f).
        """
        args = doodson_variables_days(d)
        day = np.floor(d).astype(np.int64)
        k0 = int(day.min())
        nodes = np.arange(k0, int(day.max()) + 2, dtype=float)
        node_args = doodson_variables_days(nodes)
        fam_f, fam_u = family_factors(-node_args[:, 4], node_args[:, 3] if self.needs_perigee else None)
        fam_u = np.rad2deg(np.unwrap(np.deg2rad(fam_u), axis=0))  # continuous between daily nodes
        fam_logf = np.log(np.maximum(fam_f, 1e-300))
        idx = day - k0
        w = (d - day)[:, None]
        # interpolate the (few) family values, then one matrix product gives every constituent's phase
        u_t = fam_u[idx] + w * np.diff(fam_u, axis=0)[idx]
        lhs = np.concatenate([args, u_t, np.ones((d.shape[0], 1))], axis=1)
        phase = lhs @ self.phase_matrix
        f_nodes = np.exp(fam_logf @ self.f_pow)
        f = f_nodes[idx]
        f += w * np.diff(f_nodes, axis=0)[idx]
        return phase, f


#: linear rates of the Set A polynomials (tau, s, h, p, N', p1) [deg/day]; tau = hour angle + h - s
_RATES_DEG_PER_DAY = np.array([360.0 + 0.9856473354 - 13.1763965268, 13.1763965268, 0.9856473354,
                               0.1114040803, 0.0529539222, 0.0000470684])
#: length of the blocks of :func:`_synthesise_regular` [days]
_BLOCK_DAYS = 0.25
#: shortest regular series worth the block recurrence of :func:`_synthesise_regular` [samples]
_REGULAR_MIN = 2048


def _regular_step(d: np.ndarray) -> float | None:
    """The constant spacing of ``d`` [days] when the times are a regular ascending grid, else None."""
    if d.shape[0] < _REGULAR_MIN:
        return None
    step = (d[-1] - d[0]) / (d.shape[0] - 1)
    if not step > 0:
        return None
    # stamps are whole nanoseconds: a regular grid deviates from the line by rounding only (< 1e-6 day)
    if np.max(np.abs(d - (d[0] + step * np.arange(d.shape[0])))) > 1e-6:
        return None
    return float(step)


def _synthesise_regular(d0: float, step: float, n: int, basis: _Basis, amplitudes_m: np.ndarray,
                        phases_deg: np.ndarray) -> np.ndarray:
    r"""Prediction on a regular grid by blocks of (at most) six hours.

    Within a block the equilibrium argument advances linearly, :math:`V_j(t_0 + k\Delta) = V_j(t_0) +
    \sigma_j k \Delta` (the quadratic terms of the polynomials move V by less than 1e-9 deg in a day), and the
    nodal terms f and u are held at their values at the middle of the block (u moves at most about 0.1 deg a
    day, for L2, so the phase is off by less than 0.013 deg). Then
    :math:`\eta_{bk} = \mathrm{Re} \sum_j C_{bj} E_{jk}` with :math:`C_{bj} = f_{bj} H_j
    e^{i(V_{bj} + u_{bj} - G_j)}` and :math:`E_{jk} = e^{i \sigma_j k \Delta}`: two matrix products instead of a
    cosine per sample and constituent. Agrees with the sample-by-sample synthesis to about 1e-4 of each
    amplitude (a tenth of a millimetre for a 1 m tide).
    """
    per_block = max(1, int(np.floor(_BLOCK_DAYS / step + 1e-9)))
    n_blocks = -(-n // per_block)
    half = 0.5 * step * (per_block - 1)
    # nodal terms at the middle of each block; V carried back linearly to the block's first sample
    phase, f = basis.phase_and_f(d0 + step * per_block * np.arange(n_blocks) + half)
    speed_rad_per_day = (basis.doodson @ _RATES_DEG_PER_DAY) * _RAD
    phase -= phases_deg * _RAD + speed_rad_per_day * half
    amp = f * amplitudes_m
    c_re, c_im = amp * np.cos(phase), amp * np.sin(phase)
    arg = speed_rad_per_day[:, None] * (step * np.arange(per_block))[None, :]
    out = c_re @ np.cos(arg) - c_im @ np.sin(arg)
    return out.reshape(-1)[:n]


class _GridBlocks:
    r"""Samples on a regular grid (gaps allowed) split into six-hour blocks, for fast phases.

    ``cos_sin(rows)`` gives :math:`f_j\cos\phi_j` and :math:`f_j\sin\phi_j` at the samples ``rows`` from the
    block phases, with the same approximation as :func:`_synthesise_regular` (V linear within a block, f and u
    at the block's middle): products and gathers in place of a cosine and a sine per sample and constituent.
    """

    def __init__(self, d: np.ndarray, step: float, basis: _Basis):
        self.d0, self.step, self.basis = float(d[0]), step, basis
        self.k = np.rint((d - d[0]) / step).astype(np.int64)
        self.per_block = max(1, int(np.floor(_BLOCK_DAYS / step + 1e-9)))
        n_blocks = int(self.k[-1] // self.per_block) + 1
        half = 0.5 * step * (self.per_block - 1)
        phase, f = basis.phase_and_f(self.d0 + step * self.per_block * np.arange(n_blocks) + half)
        speed = (basis.doodson @ _RATES_DEG_PER_DAY) * _RAD
        phase -= speed * half
        self.fc, self.fs = f * np.cos(phase), f * np.sin(phase)
        arg = speed[None, :] * (step * np.arange(self.per_block))[:, None]
        self.ec, self.es = np.cos(arg), np.sin(arg)

    @staticmethod
    def of(d: np.ndarray, basis: _Basis) -> _GridBlocks | None:
        """The grid blocks of ``d`` when its samples lie on a regular grid (gaps allowed), else None."""
        if d.shape[0] < _REGULAR_MIN:
            return None
        step = float(np.median(np.diff(d)))
        if not step > 0:
            return None
        step = float((d[-1] - d[0]) / np.rint((d[-1] - d[0]) / step))  # exact over the whole span
        k = np.rint((d - d[0]) / step)
        if np.max(np.abs(d - (d[0] + k * step))) > 1e-6 or np.any(np.diff(k) < 1) or k[-1] > 4 * d.shape[0]:
            return None
        return _GridBlocks(d, step, basis)

    def cos_sin(self, rows: slice, columns: slice = slice(None)) -> tuple[np.ndarray, np.ndarray]:
        k = self.k[rows]
        b, r = k // self.per_block, k % self.per_block
        fc, fs = self.fc[b, columns], self.fs[b, columns]
        ec, es = self.ec[r, columns], self.es[r, columns]
        return fc * ec - fs * es, fs * ec + fc * es

    def project(self, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        r"""Sums :math:`\sum_t f_j\cos\phi_j(t)\,y_t` and :math:`\sum_t f_j\sin\phi_j(t)\,y_t` over the samples.

        The same numbers as the design columns of :meth:`cos_sin` times ``y``, summed block by block:
        :math:`\sum_b [fc_b (Y E_c)_b - fs_b (Y E_s)_b]` with :math:`Y` the samples laid out by block and
        offset, so no design matrix is built.
        """
        grid = np.zeros((self.fc.shape[0], self.per_block))
        grid[self.k // self.per_block, self.k % self.per_block] = y
        a, b = grid @ self.ec, grid @ self.es
        return np.einsum("bj,bj->j", self.fc, a) - np.einsum("bj,bj->j", self.fs, b), \
            np.einsum("bj,bj->j", self.fs, a) + np.einsum("bj,bj->j", self.fc, b)

    def synthesise(self, amplitudes_m: np.ndarray, phases_deg: np.ndarray) -> np.ndarray:
        n_grid = int(self.k[-1]) + 1
        full = _synthesise_regular(self.d0, self.step, n_grid, self.basis, amplitudes_m, phases_deg)
        return full[self.k]


def _synthesise(d: np.ndarray, basis: _Basis, amplitudes_m: np.ndarray, phases_deg: np.ndarray) -> np.ndarray:
    grid = _GridBlocks.of(d, basis) if _regular_step(d) is None else None
    if grid is not None:
        return grid.synthesise(amplitudes_m, phases_deg)
    step = _regular_step(d)
    if step is not None:
        return _synthesise_regular(float(d[0]), step, d.shape[0], basis, amplitudes_m, phases_deg)
    out = np.empty(d.shape[0])
    g = phases_deg * _RAD
    for start in range(0, d.shape[0], CHUNK):
        sl = slice(start, start + CHUNK)
        phase, f = basis.phase_and_f(d[sl])
        phase -= g
        np.cos(phase, out=phase)
        phase *= f
        out[sl] = phase @ amplitudes_m
    return out


def _era_segments(d: np.ndarray) -> list[tuple[int, int, float]]:
    """Sampling eras of ``d`` (days since the epoch, ascending) as ``(first, stop, interval_days)`` slices;
    one segment when the sampling interval never changes (:func:`extremes.sampling.sampling_eras`)."""
    from extremes import sampling

    if d.shape[0] < 2:
        return [(0, d.shape[0], 0.0)]
    ns = np.rint(d * 86400e9).astype(np.int64) + _EPOCH_DAYS.astype(np.int64)
    eras = sampling.sampling_eras(ns)
    if len(eras) <= 1:
        return [(0, d.shape[0], float(eras["interval"].iloc[0] / pd.Timedelta(days=1)) if len(eras) else 0.0)]
    starts = np.searchsorted(ns, pd.DatetimeIndex(eras["start"]).as_unit("ns").asi8)
    stops = np.append(starts[1:], d.shape[0])
    return [(int(a), int(b), float(i / pd.Timedelta(days=1)))
            for a, b, i in zip(starts, stops, eras["interval"]) if b > a]


def _synthesise_by_era(d: np.ndarray, basis: _Basis, amplitudes_m: np.ndarray, phases_deg: np.ndarray) -> np.ndarray:
    """:func:`_synthesise` on each sampling era, so each era keeps the fast regular-grid paths."""
    increasing = d.shape[0] < 2 or bool(np.all(d[1:] > d[:-1]))
    segments = _era_segments(d) if d.shape[0] >= _REGULAR_MIN and increasing else [(0, d.shape[0], 0.0)]
    if len(segments) == 1:
        return _synthesise(d, basis, amplitudes_m, phases_deg)
    return np.concatenate([_synthesise(d[a:b], basis, amplitudes_m, phases_deg) for a, b, _ in segments])


def predict_tide(times, names, amplitudes_m, phases_deg, *, z0_m: float = 0.0) -> np.ndarray:
    r"""Tide synthesised from harmonic constants (Greenwich phase lags, UTC), nodal corrections at each time.

    Parameters
    ----------
    times : array-like of tz-aware datetimes
        Prediction instants (converted to UTC; naive times are refused).
    names : sequence of str
        Constituent names (see :data:`extremes.tide.constituents.CONSTITUENTS`).
    amplitudes_m : array-like of float
        Amplitudes H. [m]
    phases_deg : array-like of float
        Greenwich phase lags G relative to the equilibrium argument. [deg]
    z0_m : float, keyword-only
        Mean level added to the tide. [m]

    Returns
    -------
    numpy.ndarray
        :math:`Z_0 + \sum_j f_j H_j \cos(V_j + u_j - G_j)`. [m]

    Raises
    ------
    DataError
        If the times are naive, names unknown or the three sequences differ in length.

    References
    ----------
    .. [1] P. Schureman, Manual of Harmonic Analysis and Prediction of Tides, US C&GS SP 98, 1958, p. 47.
    """
    names = list(names)
    amplitudes_m = np.asarray(amplitudes_m, dtype=float).reshape(-1)
    phases_deg = np.asarray(phases_deg, dtype=float).reshape(-1)
    if not len(names) == amplitudes_m.size == phases_deg.size:
        raise DataError(f"names, amplitudes_m and phases_deg must have the same length; got {len(names)}, "
                        f"{amplitudes_m.size}, {phases_deg.size}")
    if not (np.all(np.isfinite(amplitudes_m)) and np.all(np.isfinite(phases_deg))):
        raise DataError("amplitudes_m and phases_deg must be finite numbers")
    d = days_since_epoch(times)
    if not names:
        return np.full(d.shape[0], float(z0_m))
    return _synthesise_by_era(d, _Basis(names), amplitudes_m, phases_deg) + float(z0_m)




# --------------------------------------------------------------------------------------------------------
# analysis
_EPOCH_DAYS = np.datetime64("1899-12-31T12:00:00", "ns")
_DAYS_PER_YEAR = DAYS_PER_YEAR
#: half-width of the frequency band around each species used for the residual spectrum [cycles/day]
BAND_HALF_WIDTH_CPD = 0.2
#: a constituent whose amplitude is less than this many standard errors is reported as weak (its
#: amplitude is not distinguishable from zero at about the 95 % level, normal approximation)
WEAK_AMPLITUDE_RATIO = 2.0
SCHEMA = "extremes.tide_model/1"


@dataclass(frozen=True)
class FittedConstituent:
    """Harmonic constants of one constituent.

    Attributes
    ----------
    name : str
    speed_deg_per_hour : float
        Angular speed. [deg/h]
    amplitude_m : float
        Amplitude H. [m]
    phase_deg : float
        Greenwich phase lag G (UTC, relative to the equilibrium argument), 0..360. [deg]
    amplitude_se_m, phase_se_deg : float
        Standard errors from the band-averaged residual spectrum. [m], [deg]
    amplitude_to_se : float
        Amplitude over its standard error, H / SE_H; below :data:`WEAK_AMPLITUDE_RATIO` the constituent is
        weak (its amplitude cannot be told from zero).
    inferred : bool
        True when inferred from a reference constituent rather than fitted.
    """

    name: str
    speed_deg_per_hour: float
    amplitude_m: float
    phase_deg: float
    amplitude_se_m: float
    phase_se_deg: float
    amplitude_to_se: float
    inferred: bool = False

    @property
    def significant(self) -> bool:
        """H / SE_H >= 2 (inferred constituents count as significant when their reference is)."""
        return bool(self.amplitude_to_se >= WEAK_AMPLITUDE_RATIO)

    def to_dict(self) -> dict:
        return {"name": self.name, "speed_deg_per_hour": self.speed_deg_per_hour,
                "amplitude_m": self.amplitude_m, "phase_deg": self.phase_deg,
                "amplitude_se_m": self.amplitude_se_m, "phase_se_deg": self.phase_se_deg,
                "amplitude_to_se": self.amplitude_to_se, "weak": not self.significant,
                "inferred": self.inferred}

    def __repr__(self) -> str:
        return f"FittedConstituent({self.name}, H={self.amplitude_m:.4f} m, G={self.phase_deg:.2f} deg)"


def _iso(stamp) -> str | None:
    return None if stamp is None else pd.Timestamp(stamp).tz_convert("UTC").isoformat()


def _stamp(text) -> pd.Timestamp | None:
    if text is None:
        return None
    stamp = pd.Timestamp(text)
    return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")


def _float_or_none(value):
    return None if value is None else float(value)


def _float_or_nan(value):
    return float("nan") if value is None else float(value)


@dataclass(frozen=True)
class TideModel:
    """Result of a harmonic analysis: harmonic constants and what is needed to predict.

    Attributes
    ----------
    z0_m : float
        Mean level over the analysed record (at ``reference_time`` when a trend is fitted). [m]
    constituents : tuple of FittedConstituent
        Fitted and inferred constituents.
    trend_m_per_year : float or None
        Linear trend when fitted. [m/year]
    reference_time : pandas.Timestamp
        Mid-time of the analysed samples; origin of the trend. (UTC)
    start, end : pandas.Timestamp
        First and last valid sample analysed. (UTC)
    n_samples : int
        Valid samples used.
    datum : str
        Vertical datum of the levels.
    residual_std_m : float
        Standard deviation of the fit residual. [m]
    condition_number : float or None
        Condition number of the column-scaled design matrix.
    rayleigh : float or None
        Rayleigh factor used for the choice of constituents.
    trend_se_m_per_year : float or None
        Standard error of the trend. [m/year]
    inference : dict
        Inferred name -> [reference, amplitude ratio, phase difference deg].
    """

    z0_m: float
    constituents: tuple = ()
    trend_m_per_year: float | None = None
    reference_time: pd.Timestamp | None = None
    start: pd.Timestamp | None = None
    end: pd.Timestamp | None = None
    n_samples: int = 0
    datum: str = "unspecified"
    residual_std_m: float = float("nan")
    condition_number: float | None = None
    rayleigh: float | None = None
    trend_se_m_per_year: float | None = None
    inference: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        return (f"TideModel({len(self.constituents)} constituents, z0={self.z0_m:.3f} m, "
                f"n={self.n_samples}, datum={self.datum!r})")

    @property
    def names(self) -> list[str]:
        """Constituent names, in model order."""
        return [c.name for c in self.constituents]

    def get(self, name: str) -> FittedConstituent | None:
        """The constituent called ``name`` (any accepted spelling), or None when the model lacks it."""
        key = get_constituent(name).name
        for c in self.constituents:
            if c.name == key:
                return c
        return None

    def amplitude(self, name: str) -> float:
        """Amplitude of ``name``, 0 when the model lacks it. [m]"""
        c = self.get(name)
        return 0.0 if c is None else c.amplitude_m

    def predict(self, times, *, include_mean: bool = True, exclude=()) -> pd.Series:
        """Predicted tide at the given times.

        Parameters
        ----------
        times : array-like of tz-aware datetimes, or a Series with a DatetimeIndex
            Prediction instants (UTC).
        include_mean : bool, keyword-only
            Add Z0 and the fitted trend (else the tide about zero mean).
        exclude : sequence of str, keyword-only
            Constituents left out (e.g. the radiational Sa, Ssa, S1).

        Returns
        -------
        pandas.Series
            Predicted level, indexed by the UTC times, named ``tide``; ``attrs`` units and datum. [m]
        """
        index = to_utc_index(times)
        dropped = {get_constituent(n).name for n in exclude}
        kept = [c for c in self.constituents if c.name not in dropped]
        values = predict_tide(index, [c.name for c in kept], [c.amplitude_m for c in kept],
                              [c.phase_deg for c in kept])
        if include_mean:
            values = values + self.z0_m
            if self.trend_m_per_year is not None:
                values = values + self.trend_m_per_year * _years_since(index, self.reference_time)
        out = pd.Series(values, index=index.rename("time"), name="tide")
        out.attrs.update({"units": "m", "datum": self.datum})
        return out

    def to_dict(self) -> dict:
        return {
            "schema": SCHEMA, "z0_m": self.z0_m, "datum": self.datum,
            "constituents": [c.to_dict() for c in self.constituents],
            "trend_m_per_year": self.trend_m_per_year, "trend_se_m_per_year": self.trend_se_m_per_year,
            "reference_time": _iso(self.reference_time), "start": _iso(self.start), "end": _iso(self.end),
            "n_samples": self.n_samples, "residual_std_m": self.residual_std_m,
            "condition_number": self.condition_number, "rayleigh": self.rayleigh,
            "inference": {k: list(v) for k, v in self.inference.items()},
            "conventions": {"time": "UTC", "phase": "Greenwich phase lag relative to the equilibrium argument",
                            "astronomy": "Explanatory Supplement 1961 polynomials",
                            "nodal": "exact Schureman formulas evaluated at each time"},
        }

    @classmethod
    def from_dict(cls, data: dict) -> TideModel:
        """Rebuild a model from :meth:`to_dict` output.

        Raises
        ------
        DataError
            If the dictionary is not a tide model of this schema.
        """
        if not isinstance(data, dict) or data.get("schema") != SCHEMA:
            got = data.get("schema") if isinstance(data, dict) else type(data).__name__
            raise DataError(f"tide model: expected schema {SCHEMA!r}, got {got!r}")
        try:
            constituents = tuple(
                FittedConstituent(name=get_constituent(c["name"]).name,
                                  speed_deg_per_hour=float(c["speed_deg_per_hour"]),
                                  amplitude_m=float(c["amplitude_m"]), phase_deg=float(c["phase_deg"]),
                                  amplitude_se_m=_float_or_nan(c.get("amplitude_se_m")),
                                  phase_se_deg=_float_or_nan(c.get("phase_se_deg")),
                                  amplitude_to_se=_float_or_nan(c.get("amplitude_to_se")), inferred=bool(c.get("inferred", False)))
                for c in data["constituents"])
            return cls(
                z0_m=float(data["z0_m"]), constituents=constituents,
                trend_m_per_year=_float_or_none(data.get("trend_m_per_year")),
                reference_time=_stamp(data.get("reference_time")), start=_stamp(data.get("start")),
                end=_stamp(data.get("end")), n_samples=int(data.get("n_samples", 0)),
                datum=str(data.get("datum", "unspecified")),
                residual_std_m=_float_or_nan(data.get("residual_std_m")),
                condition_number=_float_or_none(data.get("condition_number")),
                rayleigh=_float_or_none(data.get("rayleigh")),
                trend_se_m_per_year=_float_or_none(data.get("trend_se_m_per_year")),
                inference={k: tuple(v) for k, v in (data.get("inference") or {}).items()},
            )
        except (KeyError, TypeError, ValueError) as err:
            raise DataError(f"tide model: malformed entry ({err})") from None

    def save(self, path, *, overwrite: bool = False) -> Path:
        """Write the model as JSON (atomic; refuses to replace a file unless ``overwrite``)."""
        from extremes.jsonable import to_jsonable  # noqa: PLC0415 - shared strict JSON conversion
        text = json.dumps(to_jsonable(self.to_dict()), indent=2, allow_nan=False)
        return write_text_atomic(path, text + "\n", overwrite=overwrite)

    @classmethod
    def load(cls, path) -> TideModel:
        """Read a model written by :meth:`save`.

        Raises
        ------
        DataError
            If the file is not readable JSON of this schema.
        """
        try:
            data = json.loads(Path(path).read_text(encoding="utf-8"))
        except (OSError, ValueError) as err:
            raise DataError(f"{path}: cannot read a tide model ({err})") from None
        return cls.from_dict(data)


def _years_since(index: pd.DatetimeIndex, reference) -> np.ndarray:
    ref = pd.Timestamp(reference).tz_convert("UTC")
    return (days_since_epoch(index) - days_since_epoch([ref])[0]) / _DAYS_PER_YEAR


def _check_series(level_m) -> pd.Series:
    values = level_series(level_m, name="level_m")
    return values[np.isfinite(values.to_numpy())]


def _resolve_inference(infer, fitted: list[str], candidates_ok) -> dict[str, tuple[str, float, float]]:
    if infer is False or infer is None:
        return {}
    if infer is True:
        wanted = {n: (EQUILIBRIUM_INFERENCE[n][0], EQUILIBRIUM_INFERENCE[n][1], 0.0) for n in DEFAULT_INFERRED}
    elif isinstance(infer, dict):
        wanted = {}
        for name, spec in infer.items():
            try:
                ref, ratio, delta = spec
                wanted[get_constituent(name).name] = (get_constituent(ref).name, float(ratio), float(delta))
            except (TypeError, ValueError) as err:
                raise DataError(f"infer[{name!r}]: expected (reference, amplitude_ratio, phase_difference_deg),"
                                f" got {spec!r}") from err
    else:
        raise DataError(f"infer: expected True, False or a mapping name -> (reference, ratio, phase_deg); "
                        f"got {infer!r}")
    return {n: spec for n, spec in wanted.items() if n not in fitted and spec[0] in fitted and candidates_ok(n)}


def _band_variances(d: np.ndarray, resid: np.ndarray, bands: np.ndarray) -> tuple[np.ndarray, str]:
    """Equivalent white-noise variance of the residual in each band (species, cycles/day) [m^2]."""
    n = resid.size
    white = np.full(bands.shape, float(np.mean(resid**2)) * n / max(n - 1, 1))
    step = float(np.median(np.diff(d))) if n > 2 else 0.0
    if step <= 0:
        return white, "white"
    k = np.rint((d - d[0]) / step).astype(np.int64)
    if np.max(np.abs(k * step - (d - d[0]))) > 0.01 * step or k[-1] + 1 > 20 * n:
        logger.info("irregular sampling: standard errors assume white residuals")
        return white, "white"
    m = int(k[-1]) + 1
    grid = np.zeros(m)
    grid[k] = resid
    power = np.abs(np.fft.rfft(grid)) ** 2 * 2.0 / m**2
    freq = np.fft.rfftfreq(m, d=step)  # cycles/day
    fraction = n / m
    out = np.empty(bands.shape)
    for i, band in enumerate(bands):
        lo, hi = (1e-12, BAND_HALF_WIDTH_CPD) if band == 0 else (band - BAND_HALF_WIDTH_CPD,
                                                                  band + BAND_HALF_WIDTH_CPD)
        sel = (freq > lo) & (freq <= hi)
        sel[0] = False
        if sel.sum() < 3:
            out[i] = white[i]
            continue
        out[i] = power[sel].mean() * (m / 2.0) / fraction
    return out, "band-averaged residual spectrum"


_SHARED_DESIGN: contextvars.ContextVar = contextvars.ContextVar("extremes_shared_tide_design", default=None)


@contextlib.contextmanager
def shared_design():
    """Within this context, analyses of series on the same valid sample times share their normal matrix.

    Points of a gridded model output usually share their time axis: the normal matrix :math:`X^TX` of the
    least-squares fit (and the phases of its regular grid) are then built once, and each further series
    only needs :math:`X^Ty` (:meth:`_GridBlocks.project`). The fit is the same to floating-point rounding.
    Only the last design is kept (memory ~ one design's block phases).
    """
    token = _SHARED_DESIGN.set({})
    try:
        yield
    finally:
        _SHARED_DESIGN.reset(token)


def _projected_xty(grid, y, d, d_mid, trend, m_fit, ref_index, ratio, delta) -> np.ndarray:
    """:math:`X^Ty` of :func:`analyse_tide`'s design from the grid blocks, without building the design."""
    c, s = grid.project(y)
    cos_part, sin_part = c[:m_fit].copy(), s[:m_fit].copy()
    for q, r in enumerate(ref_index):  # the constrained columns of the inferred constituents
        cd, sd = np.cos(delta[q]) * ratio[q], np.sin(delta[q]) * ratio[q]
        cos_part[r] += c[m_fit + q] * cd + s[m_fit + q] * sd
        sin_part[r] += s[m_fit + q] * cd - c[m_fit + q] * sd
    lead = [y.sum()] + ([((d - d_mid) / _DAYS_PER_YEAR) @ y] if trend else [])
    return np.concatenate([lead, cos_part, sin_part])


def analyse_tide(level_m, *, constituents="auto", rayleigh: float = 1.0, infer=True, trend: bool = False,
                 chunk_size: int = CHUNK) -> TideModel:
    r"""Least-squares harmonic analysis of a water-level record.

    Parameters
    ----------
    level_m : pandas.Series
        Levels indexed by tz-aware UTC times; NaN rows are gaps and are left out (no interpolation). [m]
    constituents : "auto" or sequence of str, keyword-only
        ``"auto"``: the Rayleigh choice of :func:`~extremes.tide.constituents.select_constituents` over the
        span of valid samples. A list is fitted as given; pairs that the record does not resolve
        (Rayleigh) are refused.
    rayleigh : float, keyword-only
        Rayleigh factor R (resolution :math:`|\sigma_j-\sigma_k| L \ge 360 R`).
    infer : bool or dict, keyword-only
        True: infer P1 from K1 and K2 from S2 with equilibrium ratios (0.331, 0.272, phase difference 0) when
        the record does not resolve them. A dict ``{name: (reference, amplitude_ratio, phase_diff_deg)}``
        gives other ratios (e.g. from a nearby long record). False: no inference.
    trend : bool, keyword-only
        Fit a linear trend about the record's mid-time.
    chunk_size : int, keyword-only
        Samples per block when accumulating the normal equations (memory does not grow with length).

    Returns
    -------
    TideModel

    Raises
    ------
    DataError
        Bad input, or a record too short for any constituent.
    FitError
        Singular normal equations.

    Notes
    -----
    Model :math:`y = Z_0 [+ b(t - t_{mid})] + \sum_j f_j(a_j\cos\phi_j + b_j\sin\phi_j)`,
    :math:`\phi_j = V_j + u_j`, f and u at each sample. :math:`H = \sqrt{a^2+b^2}`,
    :math:`G = \operatorname{atan2}(b, a)`. An inferred constituent i of reference r adds
    :math:`
ho (f_i/f_r)`-weighted columns to r's pair (constrained-column form), so the fit stays linear.
    The normal equations :math:`X^TX`, :math:`X^Ty` are accumulated over blocks of ``chunk_size``
    samples and solved after column scaling (Cholesky, eigen-decomposition as fallback). Standard errors
    use, for each constituent, the residual variance of its frequency band (species k: k +- 0.2 cycles/day;
    long-period: 0-0.2 cycles/day) from the periodogram of the residual on the sampling grid (gaps as
    zeros, rescaled by the fraction of valid samples) in place of the white-noise variance [3]_; linearised
    :math:`\sigma_H`, :math:`\sigma_G`. The ratio :math:`H/\sigma_H` is reported; below 2 a constituent is weak.

    References
    ----------
    .. [1] G. Godin, The Analysis of Tides. Toronto: Univ. Toronto Press, 1972.
    .. [2] M. G. G. Foreman, Manual for tidal heights analysis and prediction, Pacific Marine Science
           Report 77-10, 1977 (rev. 2004).
    .. [3] D. T. Pugh, Tides, Surges and Mean Sea-Level. Chichester: Wiley, 1987, ch. 4.
    """
    values = _check_series(level_m)
    datum = str(level_m.attrs.get("datum", "unspecified"))
    n = values.size
    if n < 3:
        raise DataError(f"level_m: {n} valid samples; expected at least a day of data")
    if not rayleigh > 0:
        raise DataError(f"rayleigh must be > 0; got {rayleigh}")
    ns = values.index.tz_convert("UTC").tz_localize(None).values.astype("datetime64[ns]")
    d = (ns - _EPOCH_DAYS).astype(np.int64) / 86400e9
    y = values.to_numpy(dtype=float)
    span_hours = (d[-1] - d[0]) * 24.0
    sampling_hours = float(np.median(np.diff(d))) * 24.0
    segments = _era_segments(d)
    if len(segments) > 1:  # the coarsest era sets the Nyquist speed (no constituent aliased in any era)
        sampling_hours = max(iv for _, _, iv in segments) * 24.0
    if span_hours <= 0:
        raise DataError("level_m: all valid samples at one time; expected a record spanning at least a day")
    nyquist = 180.0 / sampling_hours

    limit = 360.0 * rayleigh / span_hours
    if isinstance(constituents, str):
        if constituents != "auto":
            raise DataError(f"constituents: expected 'auto' or a list of names, got {constituents!r}")
        names = select_constituents(span_hours, rayleigh=rayleigh, sampling_hours=sampling_hours)
        if "M2" not in names:
            names = []
    else:
        names = [get_constituent(c).name for c in constituents]
        if len(set(names)) != len(names):
            raise DataError(f"constituents: names repeated in {list(constituents)}")
        sp = {nm: get_constituent(nm).speed_deg_per_hour for nm in names}
        for i, a in enumerate(names):
            if abs(sp[a]) < limit:
                raise DataError(f"constituents: {a} is not resolved from the mean over {span_hours:.1f} h "
                                f"(Rayleigh R={rayleigh}); drop it or give a longer record")
            if sp[a] >= nyquist:
                raise DataError(f"constituents: {a} ({sp[a]:.4f} deg/h) is above the Nyquist speed "
                                f"{nyquist:.4f} deg/h of {sampling_hours:g}-h sampling")
            for b in names[i + 1:]:
                if abs(sp[a] - sp[b]) < limit:
                    raise DataError(f"constituents: {a} and {b} are not resolved over {span_hours:.1f} h "
                                    f"(Rayleigh R={rayleigh}); drop one")
    if not names:
        raise DataError(f"level_m: a span of {span_hours:.1f} h resolves no constituent "
                        f"(M2 needs {360 * rayleigh / 28.9841042:.1f} h)")
    def unresolved(nm):  # inferred only when below Nyquist and not resolved from its reference
        speed = get_constituent(nm).speed_deg_per_hour
        ref = (infer.get(nm, ("",))[0] if isinstance(infer, dict) else EQUILIBRIUM_INFERENCE.get(nm, ("",))[0])
        ref_speed = get_constituent(ref).speed_deg_per_hour if ref else np.inf
        return speed < nyquist and abs(speed - ref_speed) < limit

    inference = _resolve_inference(infer, names, unresolved)
    inferred = list(inference)
    all_names = names + inferred
    m_fit = len(names)
    n_lead = 2 if trend else 1
    n_par = n_lead + 2 * m_fit
    if n <= n_par:
        raise DataError(f"level_m: {n} valid samples for {n_par} parameters; expected more samples")

    basis = _Basis(all_names)
    ref_index = np.array([names.index(inference[i][0]) for i in inferred], dtype=int)
    ratio = np.array([inference[i][1] for i in inferred])
    delta = np.array([inference[i][2] for i in inferred]) * _RAD
    d_mid = 0.5 * (d[0] + d[-1])

    # a design shared by the points of a model block (shared_design), when the record has one sampling era
    shared = _SHARED_DESIGN.get()
    key = None if shared is None or len(segments) > 1 else (
        hashlib.sha1(d.tobytes()).hexdigest(), tuple(all_names), trend, ref_index.tobytes(), ratio.tobytes(),
        delta.tobytes())
    reused = shared.get(key) if key is not None else None
    # sampling eras: each sample weighted by the time it represents (its era's interval, METHODS sec. 14),
    # each era on its own grid blocks
    if len(segments) > 1:
        span_w = np.array([iv for _, _, iv in segments])
        counts = np.array([b - a for a, b, _ in segments], dtype=float)
        seg_weight = span_w * counts.sum() / float(np.dot(span_w, counts))  # mean weight 1 per sample
        logger.info("harmonic analysis over %d sampling eras, samples weighted by their interval", len(segments))
    else:
        seg_weight = np.ones(1)
    # regular grid (gaps allowed): block phases
    grids = [reused[0]] if reused is not None else [_GridBlocks.of(d[a:b], basis) for a, b, _ in segments]

    def design(sl: slice, grid, d_seg) -> np.ndarray:
        rows = d_seg[sl].shape[0]
        x = np.empty((rows, n_par), order="F")
        x[:, 0] = 1.0
        if trend:
            x[:, 1] = (d_seg[sl] - d_mid) / _DAYS_PER_YEAR
        c_block = x[:, n_lead:n_lead + m_fit]
        s_block = x[:, n_lead + m_fit:]
        if grid is not None:
            c_block[...], s_block[...] = grid.cos_sin(sl, slice(0, m_fit))
            if inferred:
                ci, si = grid.cos_sin(sl, slice(m_fit, None))
        else:
            phase, f = basis.phase_and_f(d_seg[sl])
            np.cos(phase[:, :m_fit], out=c_block)
            c_block *= f[:, :m_fit]
            np.sin(phase[:, :m_fit], out=s_block)
            s_block *= f[:, :m_fit]
            if inferred:
                ci, si = f[:, m_fit:] * np.cos(phase[:, m_fit:]), f[:, m_fit:] * np.sin(phase[:, m_fit:])
        for q, r in enumerate(ref_index):  # constrained columns: f cos(phi - delta) = f cos phi cos delta + ...
            cd, sd = np.cos(delta[q]) * ratio[q], np.sin(delta[q]) * ratio[q]
            c_block[:, r] += ci[:, q] * cd + si[:, q] * sd
            s_block[:, r] += si[:, q] * cd - ci[:, q] * sd
        return x

    if reused is not None and grids[0] is not None:
        xtx, xty = reused[1], _projected_xty(grids[0], y, d, d_mid, trend, m_fit, ref_index, ratio, delta)
    else:
        xtx = np.zeros((n_par, n_par))
        xty = np.zeros(n_par)
        for (first, stop, _), grid, weight in zip(segments, grids, seg_weight):
            d_seg, y_seg = d[first:stop], y[first:stop]
            for start in range(0, stop - first, chunk_size):
                sl = slice(start, start + chunk_size)
                x = design(sl, grid, d_seg)
                upper = scipy.linalg.blas.dsyrk(float(weight), x, trans=1)  # w X^T X, upper triangle
                xtx += np.triu(upper) + np.triu(upper, 1).T
                xty += weight * (x.T @ y_seg[sl])
                del x
        if key is not None and grids[0] is not None:
            shared.clear()
            shared[key] = (grids[0], xtx)
    scale = np.sqrt(np.diag(xtx))
    if np.any(scale == 0):
        raise FitError("harmonic analysis: a design column is all zero")
    a_mat = xtx / np.outer(scale, scale)
    eig = np.linalg.eigvalsh(a_mat)
    condition = float(np.sqrt(eig[-1] / eig[0])) if eig[0] > 0 else float("inf")
    if not np.isfinite(condition) or condition > 1e7:
        raise FitError(f"harmonic analysis: normal equations singular (condition number {condition:.3g}); "
                       f"constituents {names} are not separable in this record")
    if condition > 1e3:
        warnings.warn(f"harmonic analysis: condition number {condition:.3g} is large; constituents are "
                      f"poorly separated", ExtremesWarning, stacklevel=2)
    try:
        cho = scipy.linalg.cho_factor(a_mat)
        beta_scaled = scipy.linalg.cho_solve(cho, xty / scale)
        inv_scaled = scipy.linalg.cho_solve(cho, np.eye(n_par))
    except np.linalg.LinAlgError:
        inv_scaled = np.linalg.pinv(a_mat, hermitian=True)
        beta_scaled = inv_scaled @ (xty / scale)
    beta = beta_scaled / scale
    cov_unit = inv_scaled / np.outer(scale, scale)

    z0 = float(beta[0])
    trend_value = float(beta[1]) if trend else None
    a_all = beta[n_lead:n_lead + m_fit]
    b_all = beta[n_lead + m_fit:]
    amp = np.hypot(a_all, b_all)
    pha = np.rad2deg(np.arctan2(b_all, a_all)) % 360.0
    amp_all = np.concatenate([amp, ratio * amp[ref_index]])
    pha_all = np.concatenate([pha, (pha[ref_index] + np.rad2deg(delta)) % 360.0])
    # residual by synthesis (one cosine per constituent, no design matrix): equal to y - X beta
    resid = y - z0 - np.concatenate([
        grid.synthesise(amp_all, pha_all) if grid is not None else _synthesise(d[a:b], basis, amp_all, pha_all)
        for (a, b, _), grid in zip(segments, grids)])
    if trend:
        resid -= trend_value * (d - d_mid) / _DAYS_PER_YEAR
    dof = n - n_par
    residual_std = float(np.sqrt(np.sum(resid**2) / dof))
    speeds_all = np.array([get_constituent(nm).speed_deg_per_hour for nm in names])
    bands = np.rint(speeds_all / 15.0)
    band_var, how = _band_variances(d, resid, np.concatenate([[0.0], bands]))
    trend_se = float(np.sqrt(cov_unit[1, 1] * band_var[0])) if trend else None

    fitted = []
    by_name = {}
    for j, nm in enumerate(names):
        ia, ib = n_lead + j, n_lead + m_fit + j
        a, b = a_all[j], b_all[j]
        var = band_var[1 + j]
        va, vb, cab = cov_unit[ia, ia] * var, cov_unit[ib, ib] * var, cov_unit[ia, ib] * var
        h, g = float(amp[j]), float(pha[j])
        if h > 0:
            se_h = float(np.sqrt(max((a * a * va + b * b * vb + 2 * a * b * cab) / h**2, 0.0)))
            se_g = float(np.rad2deg(np.sqrt(max((b * b * va + a * a * vb - 2 * a * b * cab) / h**4, 0.0))))
            se_g = min(se_g, 180.0)  # the linearisation fails for amplitudes near zero: phase undetermined
        else:
            se_h, se_g = float(np.sqrt(0.5 * (va + vb))), 180.0
        ratio = float(h / se_h) if se_h > 0 else float("inf")
        item = FittedConstituent(nm, round(float(speeds_all[j]), 7), h, g, se_h, se_g, ratio, False)
        fitted.append(item)
        by_name[nm] = item
    for q, nm in enumerate(inferred):
        ref, rho, dlt = inference[nm]
        r = by_name[ref]
        fitted.append(FittedConstituent(
            nm, round(get_constituent(nm).speed_deg_per_hour, 7), float(amp_all[m_fit + q]),
            float(pha_all[m_fit + q]), rho * r.amplitude_se_m, r.phase_se_deg, r.amplitude_to_se, True))
    index_valid = values.index.tz_convert("UTC")
    mid = index_valid[0] + (index_valid[-1] - index_valid[0]) / 2
    logger.info("harmonic analysis: %d samples, %d constituents fitted, %d inferred, condition %.3g, "
                "errors from %s", n, m_fit, len(inferred), condition, how)
    return TideModel(
        z0_m=z0, constituents=tuple(fitted), trend_m_per_year=trend_value, reference_time=mid,
        start=index_valid[0], end=index_valid[-1], n_samples=int(n), datum=datum,
        residual_std_m=residual_std, condition_number=condition, rayleigh=float(rayleigh),
        trend_se_m_per_year=trend_se, inference={k: tuple(v) for k, v in inference.items()},
    )


__all__ = ["predict_tide", "analyse_tide", "shared_design", "TideModel", "FittedConstituent",
           "WEAK_AMPLITUDE_RATIO"]
