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
import logging
import warnings

import numpy as np
import pandas as pd
import scipy.linalg
import scipy.linalg.blas

from extremes.errors import DataError, ExtremesWarning, FitError
from extremes.tide.constituents import (
    DEFAULT_INFERRED,
    EQUILIBRIUM_INFERENCE,
    get_constituent,
    select_constituents,
)

# the model's and the synthesis' names, importable from here as before the split
from extremes.tide.model import (  # noqa: F401
    _DAYS_PER_YEAR,
    BAND_HALF_WIDTH_CPD,
    SCHEMA,
    WEAK_AMPLITUDE_RATIO,
    FittedConstituent,
    TideModel,
)
from extremes.tide.synthesis import (  # noqa: F401
    _EPOCH_DAYS,
    _RAD,
    CHUNK,
    _Basis,
    _era_segments,
    _GridBlocks,
    _synthesise,
    predict_tide,
    shared_phases,
)
from extremes.timebase import level_series

logger = logging.getLogger(__name__)


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


#: rows of the design gathered at a time from the grid blocks (temporaries of ~4 MB)
_GATHER_ROWS = 8192

_SHARED_DESIGN: contextvars.ContextVar = contextvars.ContextVar("extremes_shared_tide_design", default=None)


@contextlib.contextmanager
def shared_design():
    """Within this context, analyses of series on the same valid sample times share their normal matrix.

    Points of a gridded model output usually share their time axis: the normal matrix :math:`X^TX` of the
    least-squares fit (and the phases of its regular grid) are then built once, and each further series
    only needs :math:`X^Ty` (:meth:`_GridBlocks.project`). The fit is the same to floating-point rounding.
    Only the last design is kept (memory ~ one design's block phases). Predictions on a shared grid share
    their block phases too (:func:`extremes.tide.synthesis.shared_phases`).
    """
    token = _SHARED_DESIGN.set({})
    try:
        with shared_phases():
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
    record = _Record.of(values, rayleigh=rayleigh)
    names = _chosen_constituents(constituents, record, rayleigh)
    inference = _resolve_inference(infer, names, lambda nm: _unresolved(nm, infer, record, rayleigh))
    design = _Design(names, inference, trend=trend, d_mid=0.5 * (record.d[0] + record.d[-1]))
    if record.n <= design.n_par:
        raise DataError(f"level_m: {record.n} valid samples for {design.n_par} parameters; expected more samples")
    xtx, xty, grids = _normal_equations(record, design, chunk_size)
    beta, cov_unit, condition = _solve(xtx, xty, names)
    return _model(values, record, design, beta, cov_unit, condition, grids, rayleigh=rayleigh,
                  datum=str(level_m.attrs.get("datum", "unspecified")))


class _Record:
    """The valid samples of a record as the analysis needs them: days since the epoch, values, span, eras."""

    def __init__(self, d: np.ndarray, y: np.ndarray):
        self.d, self.y, self.n = d, y, y.size
        self.span_hours = (d[-1] - d[0]) * 24.0 if d.size else 0.0
        self.segments = _era_segments(d)
        sampling_hours = float(np.median(np.diff(d))) * 24.0 if d.size > 1 else 1.0
        if len(self.segments) > 1:  # the coarsest era sets the Nyquist speed (no constituent aliased in any era)
            sampling_hours = max(iv for _, _, iv in self.segments) * 24.0
        self.sampling_hours = sampling_hours
        self.nyquist = 180.0 / sampling_hours

    @classmethod
    def of(cls, values: pd.Series, *, rayleigh: float) -> _Record:
        if values.size < 3:
            raise DataError(f"level_m: {values.size} valid samples; expected at least a day of data")
        if not rayleigh > 0:
            raise DataError(f"rayleigh must be > 0; got {rayleigh}")
        ns = values.index.tz_convert("UTC").tz_localize(None).values.astype("datetime64[ns]")
        record = cls((ns - _EPOCH_DAYS).astype(np.int64) / 86400e9, values.to_numpy(dtype=float))
        if record.span_hours <= 0:
            raise DataError("level_m: all valid samples at one time; expected a record spanning at least a day")
        return record

    def weights(self) -> np.ndarray:
        """Weight of each era's samples: the time each represents (its interval), mean 1 per sample
        (METHODS sec. 14); one weight of 1 for a single era."""
        if len(self.segments) == 1:
            return np.ones(1)
        span_w = np.array([iv for _, _, iv in self.segments])
        counts = np.array([b - a for a, b, _ in self.segments], dtype=float)
        logger.info("harmonic analysis over %d sampling eras, samples weighted by their interval",
                    len(self.segments))
        return span_w * counts.sum() / float(np.dot(span_w, counts))


def _chosen_constituents(constituents, record: _Record, rayleigh: float) -> list[str]:
    """The constituents to fit: the automatic Rayleigh choice, or a given list checked for resolution."""
    span_hours, nyquist = record.span_hours, record.nyquist
    limit = 360.0 * rayleigh / span_hours
    if isinstance(constituents, str):
        if constituents != "auto":
            raise DataError(f"constituents: expected 'auto' or a list of names, got {constituents!r}")
        names = select_constituents(span_hours, rayleigh=rayleigh, sampling_hours=record.sampling_hours)
        names = names if "M2" in names else []
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
                                f"{nyquist:.4f} deg/h of {record.sampling_hours:g}-h sampling")
            for b in names[i + 1:]:
                if abs(sp[a] - sp[b]) < limit:
                    raise DataError(f"constituents: {a} and {b} are not resolved over {span_hours:.1f} h "
                                    f"(Rayleigh R={rayleigh}); drop one")
    if not names:
        raise DataError(f"level_m: a span of {span_hours:.1f} h resolves no constituent "
                        f"(M2 needs {360 * rayleigh / 28.9841042:.1f} h)")
    return names


def _unresolved(name: str, infer, record: _Record, rayleigh: float) -> bool:
    """Inferred only when below the Nyquist speed and not resolved from its reference (Rayleigh)."""
    speed = get_constituent(name).speed_deg_per_hour
    ref = (infer.get(name, ("",))[0] if isinstance(infer, dict) else EQUILIBRIUM_INFERENCE.get(name, ("",))[0])
    ref_speed = get_constituent(ref).speed_deg_per_hour if ref else np.inf
    limit = 360.0 * rayleigh / record.span_hours
    return speed < record.nyquist and abs(speed - ref_speed) < limit


class _Design:
    """Columns of the least-squares design: mean, optional trend, cos/sin of each fitted constituent, with
    each inferred constituent folded into its reference's pair (constrained-column form)."""

    def __init__(self, names: list[str], inference: dict, *, trend: bool, d_mid: float):
        self.names, self.inference, self.trend, self.d_mid = names, inference, trend, d_mid
        self.inferred = list(inference)
        self.m_fit = len(names)
        self.n_lead = 2 if trend else 1
        self.n_par = self.n_lead + 2 * self.m_fit
        self.basis = _Basis(names + self.inferred)
        self.ref_index = np.array([names.index(inference[i][0]) for i in self.inferred], dtype=int)
        self.ratio = np.array([inference[i][1] for i in self.inferred])
        self.delta = np.array([inference[i][2] for i in self.inferred]) * _RAD

    def key(self, d: np.ndarray) -> tuple:
        """Identity of the design on sample times ``d`` (for :func:`shared_design`)."""
        return (hashlib.sha1(d.tobytes()).hexdigest(), tuple(self.names + self.inferred), self.trend,
                self.ref_index.tobytes(), self.ratio.tobytes(), self.delta.tobytes())

    def rows(self, d_rows: np.ndarray, grid, sl: slice, out: np.ndarray | None = None) -> np.ndarray:
        """Design rows of samples ``d_rows`` (``grid``: the era's regular-grid blocks, or None), written into
        ``out`` (Fortran order, at least as many rows) when given."""
        m_fit, n_lead = self.m_fit, self.n_lead
        if out is not None and out.shape[0] >= d_rows.shape[0]:
            x = out[:d_rows.shape[0]]
        else:
            x = np.empty((d_rows.shape[0], self.n_par), order="F")
        x[:, 0] = 1.0
        if self.trend:
            x[:, 1] = (d_rows - self.d_mid) / _DAYS_PER_YEAR
        c_block = x[:, n_lead:n_lead + m_fit]
        s_block = x[:, n_lead + m_fit:]
        if grid is not None:
            # gathered a few thousand rows at a time: the temporaries stay in memory the allocator reuses (a
            # whole block's would be mapped afresh and page-faulted at each block); the same numbers
            for i0 in range(0, d_rows.shape[0], _GATHER_ROWS):
                i1 = min(i0 + _GATHER_ROWS, d_rows.shape[0])
                part = slice(sl.start + i0, sl.start + i1)
                c_block[i0:i1], s_block[i0:i1] = grid.cos_sin(part, slice(0, m_fit))
                if self.inferred:
                    self._constrain(c_block[i0:i1], s_block[i0:i1], *grid.cos_sin(part, slice(m_fit, None)))
        else:
            phase, f = self.basis.phase_and_f(d_rows)
            np.cos(phase[:, :m_fit], out=c_block)
            c_block *= f[:, :m_fit]
            np.sin(phase[:, :m_fit], out=s_block)
            s_block *= f[:, :m_fit]
            if self.inferred:
                self._constrain(c_block, s_block, f[:, m_fit:] * np.cos(phase[:, m_fit:]),
                                f[:, m_fit:] * np.sin(phase[:, m_fit:]))
        return x

    def _constrain(self, c_block: np.ndarray, s_block: np.ndarray, ci: np.ndarray, si: np.ndarray) -> None:
        """Add the inferred constituents' columns ``ci``, ``si`` to their references' (in place)."""
        for q, r in enumerate(self.ref_index):  # constrained columns: f cos(phi - delta) = f cos phi cos delta + ...
            cd, sd = np.cos(self.delta[q]) * self.ratio[q], np.sin(self.delta[q]) * self.ratio[q]
            c_block[:, r] += ci[:, q] * cd + si[:, q] * sd
            s_block[:, r] += si[:, q] * cd - ci[:, q] * sd


def _normal_equations(record: _Record, design: _Design, chunk_size: int):
    """:math:`X^TWX` and :math:`X^TWy` accumulated in blocks of ``chunk_size`` samples, era by era, each era's
    samples weighted by their interval; reused from :func:`shared_design` when the design was built before."""
    d, y, segments = record.d, record.y, record.segments
    shared = _SHARED_DESIGN.get()
    key = None if shared is None or len(segments) > 1 else design.key(d)
    reused = shared.get(key) if key is not None else None
    grids = [reused[0]] if reused is not None else [_GridBlocks.of(d[a:b], design.basis) for a, b, _ in segments]
    if reused is not None and grids[0] is not None:
        xty = _projected_xty(grids[0], y, d, design.d_mid, design.trend, design.m_fit, design.ref_index,
                             design.ratio, design.delta)
        return reused[1], xty, grids
    xtx = np.zeros((design.n_par, design.n_par))
    xty = np.zeros(design.n_par)
    # one block buffer for every block (allocated and page-faulted once)
    buffer = np.empty((min(chunk_size, max(b - a for a, b, _ in segments)), design.n_par), order="F")
    for (first, stop, _), grid, weight in zip(segments, grids, record.weights()):
        d_seg, y_seg = d[first:stop], y[first:stop]
        for start in range(0, stop - first, chunk_size):
            sl = slice(start, start + chunk_size)
            x = design.rows(d_seg[sl], grid, sl, out=buffer)
            upper = scipy.linalg.blas.dsyrk(float(weight), x, trans=1)  # w X^T X, upper triangle
            xtx += np.triu(upper) + np.triu(upper, 1).T
            xty += weight * (x.T @ y_seg[sl])
            del x
    if key is not None and grids[0] is not None:
        shared.clear()
        shared[key] = (grids[0], xtx)
    return xtx, xty, grids


def _solve(xtx: np.ndarray, xty: np.ndarray, names: list[str]):
    """Solution, unit covariance and condition number of the normal equations (column scaling, Cholesky,
    eigen-decomposition as fallback)."""
    n_par = xtx.shape[0]
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
                      f"poorly separated", ExtremesWarning, stacklevel=3)
    try:
        cho = scipy.linalg.cho_factor(a_mat)
        beta_scaled = scipy.linalg.cho_solve(cho, xty / scale)
        inv_scaled = scipy.linalg.cho_solve(cho, np.eye(n_par))
    except np.linalg.LinAlgError:
        inv_scaled = np.linalg.pinv(a_mat, hermitian=True)
        beta_scaled = inv_scaled @ (xty / scale)
    return beta_scaled / scale, inv_scaled / np.outer(scale, scale), condition


def _constituent(name, speed, a, b, cov_unit, ia, ib, var) -> FittedConstituent:
    """Harmonic constants of one fitted constituent with linearised standard errors (METHODS sec. 5)."""
    va, vb, cab = cov_unit[ia, ia] * var, cov_unit[ib, ib] * var, cov_unit[ia, ib] * var
    h, g = float(np.hypot(a, b)), float(np.rad2deg(np.arctan2(b, a)) % 360.0)
    if h > 0:
        se_h = float(np.sqrt(max((a * a * va + b * b * vb + 2 * a * b * cab) / h**2, 0.0)))
        se_g = float(np.rad2deg(np.sqrt(max((b * b * va + a * a * vb - 2 * a * b * cab) / h**4, 0.0))))
        se_g = min(se_g, 180.0)  # the linearisation fails for amplitudes near zero: phase undetermined
    else:
        se_h, se_g = float(np.sqrt(0.5 * (va + vb))), 180.0
    ratio = float(h / se_h) if se_h > 0 else float("inf")
    return FittedConstituent(name, round(float(speed), 7), h, g, se_h, se_g, ratio, False)


def _model(values, record: _Record, design: _Design, beta, cov_unit, condition, grids, *, rayleigh: float,
           datum: str) -> TideModel:
    """The tide model from the solution: constants, residual, band-averaged standard errors."""
    d, y, names, m_fit, n_lead = record.d, record.y, design.names, design.m_fit, design.n_lead
    z0 = float(beta[0])
    trend_value = float(beta[1]) if design.trend else None
    a_all, b_all = beta[n_lead:n_lead + m_fit], beta[n_lead + m_fit:]
    amp = np.hypot(a_all, b_all)
    pha = np.rad2deg(np.arctan2(b_all, a_all)) % 360.0
    amp_all = np.concatenate([amp, design.ratio * amp[design.ref_index]])
    pha_all = np.concatenate([pha, (pha[design.ref_index] + np.rad2deg(design.delta)) % 360.0])
    # residual by synthesis (one cosine per constituent, no design matrix): equal to y - X beta
    resid = y - z0 - np.concatenate([
        grid.synthesise(amp_all, pha_all) if grid is not None else _synthesise(d[a:b], design.basis, amp_all, pha_all)
        for (a, b, _), grid in zip(record.segments, grids)])
    if design.trend:
        resid -= trend_value * (d - design.d_mid) / _DAYS_PER_YEAR
    residual_std = float(np.sqrt(np.sum(resid**2) / (record.n - design.n_par)))
    speeds = np.array([get_constituent(nm).speed_deg_per_hour for nm in names])
    band_var, how = _band_variances(d, resid, np.concatenate([[0.0], np.rint(speeds / 15.0)]))
    trend_se = float(np.sqrt(cov_unit[1, 1] * band_var[0])) if design.trend else None
    fitted = [_constituent(nm, speeds[j], a_all[j], b_all[j], cov_unit, n_lead + j, n_lead + m_fit + j,
                           band_var[1 + j]) for j, nm in enumerate(names)]
    by_name = {c.name: c for c in fitted}
    for q, nm in enumerate(design.inferred):
        ref, rho, _ = design.inference[nm]
        r = by_name[ref]
        fitted.append(FittedConstituent(
            nm, round(get_constituent(nm).speed_deg_per_hour, 7), float(amp_all[m_fit + q]),
            float(pha_all[m_fit + q]), rho * r.amplitude_se_m, r.phase_se_deg, r.amplitude_to_se, True))
    index_valid = values.index.tz_convert("UTC")
    mid = index_valid[0] + (index_valid[-1] - index_valid[0]) / 2
    logger.info("harmonic analysis: %d samples, %d constituents fitted, %d inferred, condition %.3g, "
                "errors from %s", record.n, m_fit, len(design.inferred), condition, how)
    return TideModel(
        z0_m=z0, constituents=tuple(fitted), trend_m_per_year=trend_value, reference_time=mid,
        start=index_valid[0], end=index_valid[-1], n_samples=int(record.n), datum=datum,
        residual_std_m=residual_std, condition_number=condition, rayleigh=float(rayleigh),
        trend_se_m_per_year=trend_se, inference={k: tuple(v) for k, v in design.inference.items()},
    )

__all__ = ["predict_tide", "analyse_tide", "shared_design", "TideModel", "FittedConstituent",
           "WEAK_AMPLITUDE_RATIO"]
