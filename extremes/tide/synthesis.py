r"""Tide synthesis from harmonic constants, with nodal corrections at each time.

.. math:: \eta(t) = Z_0 + \sum_j f_j(t) H_j \cos(V_j(t) + u_j(t) - G_j)

Times UTC; phases are Greenwich phase lags G relative to the equilibrium argument V (Set A astronomy,
:mod:`extremes.tide.astronomy`) and nodal phase u [1]_. On regular grids the equilibrium argument is
advanced linearly within six-hour blocks (nodal terms held at each block's middle); records with several
sampling eras are synthesised era by era.

References
----------
.. [1] P. Schureman, Manual of Harmonic Analysis and Prediction of Tides, US C&GS Spec. Publ. 98, 1958.
"""
from __future__ import annotations

import contextlib
import contextvars
import logging

import numpy as np
import pandas as pd

from extremes.errors import DataError
from extremes.tide.astronomy import days_since_epoch, doodson_variables_days
from extremes.tide.constituents import (
    doodson_matrix,
    get_constituent,
)
from extremes.tide.nodal import family_factors, nodal_exponents

logger = logging.getLogger(__name__)

#: 1899-12-31 12:00 UT, the epoch of the astronomical arguments (JD 2415020.0)
_EPOCH_DAYS = np.datetime64("1899-12-31T12:00:00", "ns")

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


#: block phases kept for reuse within :func:`shared_phases`: ``{key: (f cos, f sin)}`` (None: not sharing)
_SHARED_PHASES: contextvars.ContextVar = contextvars.ContextVar("extremes_shared_block_phases", default=None)
#: most block-phase tables kept within :func:`shared_phases` (a study predicts on about six grids)
_SHARED_MAX = 8


@contextlib.contextmanager
def shared_phases():
    r"""Within this context, predictions on the same regular grid with the same constituents share the
    phases of its six-hour blocks.

    The block terms :math:`f_{bj}\cos a_{bj}` and :math:`f_{bj}\sin a_{bj}` (:math:`a = V + u` at the block's
    start) depend on the grid and the constituents only; each further prediction applies its own constants by
    :math:`\cos(a - G) = \cos a \cos G + \sin a \sin G`, so the points of a model output that share their
    time axis pay for the cosines once. The prediction is the same to floating-point rounding (about 1e-16 of
    each amplitude). At most :data:`_SHARED_MAX` grids are kept (tens of MB each for decades at 10 minutes).
    """
    token = _SHARED_PHASES.set({})
    try:
        yield
    finally:
        _SHARED_PHASES.reset(token)


def _block_terms(d0: float, step: float, n_blocks: int, per_block: int, basis: _Basis):
    """``f cos a``, ``f sin a`` at the first sample of each block (:func:`_synthesise_regular`), from the
    :func:`shared_phases` store when there; None outside that context."""
    shared = _SHARED_PHASES.get()
    if shared is None:
        return None
    key = (float(d0), float(step), int(n_blocks), int(per_block), tuple(basis.names))
    found = shared.get(key)
    if found is None:
        half = 0.5 * step * (per_block - 1)
        phase, f = basis.phase_and_f(d0 + step * per_block * np.arange(n_blocks) + half)
        phase -= ((basis.doodson @ _RATES_DEG_PER_DAY) * _RAD) * half
        found = _keep_terms(shared, key, (f * np.cos(phase), f * np.sin(phase)))
    return found


def _keep_terms(shared: dict, key: tuple, terms: tuple) -> tuple:
    """Store block terms under ``key``, dropping the oldest beyond :data:`_SHARED_MAX`; the terms."""
    if len(shared) >= _SHARED_MAX:
        shared.pop(next(iter(shared)))
    shared[key] = terms
    return terms


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
    speed_rad_per_day = (basis.doodson @ _RATES_DEG_PER_DAY) * _RAD
    terms = _block_terms(d0, step, n_blocks, per_block, basis)
    if terms is not None:  # shared block phases: cos(a - G) = cos a cos G + sin a sin G
        g = phases_deg * _RAD
        cos_g, sin_g = amplitudes_m * np.cos(g), amplitudes_m * np.sin(g)
        c_re, c_im = terms[0] * cos_g + terms[1] * sin_g, terms[1] * cos_g - terms[0] * sin_g
    else:
        # nodal terms at the middle of each block; V carried back linearly to the block's first sample
        phase, f = basis.phase_and_f(d0 + step * per_block * np.arange(n_blocks) + half)
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
        shared = _SHARED_PHASES.get()
        key = (self.d0, self.step, self.fc.shape[0], self.per_block, tuple(self.basis.names))
        if shared is not None and key not in shared:  # the same block terms as _block_terms computes
            _keep_terms(shared, key, (self.fc, self.fs))
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
    if _regular_step(d) is not None:  # one constant spacing: one era (no era search on the float times)
        return _synthesise(d, basis, amplitudes_m, phases_deg)
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




