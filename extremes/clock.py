r"""Clock (timing) faults: spans of a month or more whose tide runs early or late against the rest of the record.

If a gauge's stamps run :math:`\tau` ahead of true time (a logger kept on local or summer time but labelled
UTC, a clock that drifted), the tide read on the stamps is the true tide delayed: every constituent of speed
:math:`\sigma` shows the phase lag :math:`g + \sigma\tau` (METHODS sec. 14). :func:`timing_offsets` finds such
spans:

1. a compact tide model (the major constituents the record resolves, with nodal corrections) is fitted by
   least squares to the clean record thinned to one reading every three hours;
2. the model's prediction is split by species (diurnal, semidiurnal, ...) into an in-phase part :math:`P_s`
   and a quadrature part :math:`Q_s` (the same constituents 90 degrees later), so the prediction delayed by
   :math:`\tau` is :math:`\sum_s P_s\cos(\bar\sigma_s\tau) + Q_s\sin(\bar\sigma_s\tau)` with
   :math:`\bar\sigma_s` the species' mean speed (the species' constituents differ in speed by a few
   per cent, so a one-hour delay is off by under a degree);
3. in each calendar month, :math:`\tau` is the delay that minimises the squared difference between the
   observed levels and the delayed prediction plus a constant, found on a one-minute grid from -180 to +180
   minutes (with a parabola through the best three) from the month's sums of squares and cross-products: the
   whole tide moves together, as a clock fault moves every species by the same :math:`\tau`;
4. months whose delay departs from the record's median delay by more than ``min_offset_minutes`` (10) and
   by more than five robust standard deviations of the monthly delays (a monthly M2 phase is good to a degree
   or two, about 2-4 minutes [1]_) are candidates; consecutive candidates with the same delay form a span;
5. each span's start and end are placed at the sample that best separates the two delays (least squares over
   the samples around the month boundary), and its offset is re-estimated over the whole span.

The model is fitted again without the spans found, and the search repeated once, so that a long fault does
not bias the reference. ``offset_minutes`` is how far the stamps run ahead of true time (a clock on UTC+1
labelled UTC gives +60; the correction is ``shift_minutes = -offset_minutes``).

References
----------
.. [1] D. T. Pugh and P. L. Woodworth, Sea-Level Science. Cambridge, U.K.: Cambridge Univ. Press, 2014
   (timing checks of tide-gauge data). [from memory]
"""
from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from extremes.errors import ExtremesError

logger = logging.getLogger(__name__)

__all__ = ["timing_offsets", "empty_offsets", "species_columns"]

#: constituents of the compact model, when the record resolves them
MAJOR = ("M2", "S2", "N2", "K1", "O1", "K2", "P1", "Q1", "M4", "MS4", "MN4", "2N2", "nu2", "L2", "mu2", "M6")
#: delays searched [minutes]
SEARCH_MINUTES = np.arange(-180.0, 180.5, 1.0)
_HOUR_NS = 3_600_000_000_000
_MINUTE_NS = 60_000_000_000


def empty_offsets() -> pd.DataFrame:
    """An empty table of timing offsets."""
    return pd.DataFrame({"start": pd.DatetimeIndex([], tz="UTC"), "end": pd.DatetimeIndex([], tz="UTC"),
                         "offset_minutes": np.array([], dtype=float), "months": np.array([], dtype=np.int64),
                         "statistic": np.array([], dtype=float)})


#: the clock check reads the first valid sample of each bin of this many hours (8 a day resolve M2 and K1)
THIN_HOURS = 3


def _thin_hourly(valid: pd.Series) -> pd.Series:
    """The first valid sample of each bin of :data:`THIN_HOURS` hours."""
    bins = valid.index.as_unit("ns").asi8 // (THIN_HOURS * _HOUR_NS)
    keep = np.concatenate([[True], bins[1:] != bins[:-1]])
    return valid[keep]


#: unresolved constituents inferred from a reference with the equilibrium ratio (phase difference 0) [CP]
_INFERRED = {"K2": ("S2", 0.272), "P1": ("K1", 0.331)}


class _CompactTide:
    """Least-squares fit of the major constituents (nodal corrections at each sample), split by species.

    ``columns(times)`` gives the in-phase and quadrature prediction of each species (:math:`P_s, Q_s`)
    and ``speeds`` the species' mean speeds [rad/minute].
    """

    def __init__(self, series: pd.Series, *, keep: np.ndarray | None = None, cache=None):
        """Fit to ``series`` (only the samples where ``keep``); ``cache`` reuses the basis of a previous fit
        on the same series."""
        from extremes.tide.constituents import get_constituent, select_constituents

        span_hours = (series.index[-1] - series.index[0]) / pd.Timedelta(hours=1)
        chosen = select_constituents(span_hours, sampling_hours=float(THIN_HOURS))
        self.names = [n for n in MAJOR if n in chosen]
        if "M2" not in self.names:
            raise _NoTide
        self.inferred = {k: v for k, v in _INFERRED.items() if k not in self.names and v[0] in self.names}
        self.all_names = self.names + list(self.inferred)
        self.speed = np.array([get_constituent(n).speed_deg_per_hour for n in self.all_names])
        self._times = series.index
        self._cache = cache if cache is not None else self._phase_and_f(series.index)
        phase, f = self._cache
        keep = np.ones(len(series), dtype=bool) if keep is None else keep
        c, s_ = self._design(phase[keep], f[keep])
        x = np.column_stack([np.ones(int(keep.sum())), c, s_])
        coef = np.linalg.solve(x.T @ x, x.T @ series.to_numpy(dtype=float)[keep])  # normal equations
        m = len(self.names)
        a, b = coef[1:1 + m], coef[1 + m:]
        amp, phase = np.hypot(a, b), np.arctan2(b, a)
        ref = [self.names.index(v[0]) for v in self.inferred.values()]
        ratio = np.array([v[1] for v in self.inferred.values()])
        self.amplitude = np.concatenate([amp, ratio * amp[ref]]) if ref else amp
        self.phase = np.concatenate([phase, phase[ref]]) if ref else phase
        self.species = np.rint(self.speed / 15.0).astype(int)
        self.groups = [g for g in sorted(set(self.species)) if g >= 1]
        self.speeds = np.array([np.deg2rad(np.average(self.speed[self.species == g],
                                                      weights=self.amplitude[self.species == g] + 1e-12)) / 60.0
                                for g in self.groups])

    def _phase_and_f(self, times):
        from extremes.tide.astronomy import days_since_epoch
        from extremes.tide.harmonic import _Basis

        return _Basis(self.all_names).phase_and_f(days_since_epoch(times))

    def _design(self, phase, f):
        m = len(self.names)
        c, s_ = f[:, :m] * np.cos(phase[:, :m]), f[:, :m] * np.sin(phase[:, :m])
        for q, (ref, ratio) in enumerate(self.inferred.values()):
            r = self.names.index(ref)
            c[:, r] += ratio * f[:, m + q] * np.cos(phase[:, m + q])
            s_[:, r] += ratio * f[:, m + q] * np.sin(phase[:, m + q])
        return c, s_

    def columns(self, times) -> np.ndarray:
        same = len(times) == len(self._times) and times.equals(self._times)
        phase, f = self._cache if same else self._phase_and_f(times)
        arg = phase - self.phase[None, :]
        fh = f * self.amplitude[None, :]
        out = np.empty((arg.shape[0], 2 * len(self.groups)))
        for k, g in enumerate(self.groups):
            sel = self.species == g
            out[:, 2 * k] = (fh[:, sel] * np.cos(arg[:, sel])).sum(axis=1)
            out[:, 2 * k + 1] = (fh[:, sel] * np.sin(arg[:, sel])).sum(axis=1)
        return out


class _NoTide(Exception):
    """The record resolves no semidiurnal tide to time."""


def species_columns(model, times) -> tuple[np.ndarray, np.ndarray]:
    """In-phase and quadrature predictions per species (``(n, 2 * n_species)``) and mean speeds [rad/min]."""
    return model.columns(times), model.speeds


def _weights(speeds: np.ndarray, minutes: np.ndarray) -> np.ndarray:
    """``(len(minutes), 2 * n_species)``: cos and sin of each species' phase delay."""
    arg = minutes[:, None] * speeds[None, :]
    out = np.empty((minutes.size, 2 * speeds.size))
    out[:, 0::2], out[:, 1::2] = np.cos(arg), np.sin(arg)
    return out


def _window_sums(a: np.ndarray, y: np.ndarray, starts: np.ndarray):
    """Sums per window (windows start at ``starts``): n, sum y, sum y^2, sum a, a'y, a'a."""
    n = np.diff(np.append(starts, y.size)).astype(float)
    sy = np.add.reduceat(y, starts)
    syy = np.add.reduceat(y * y, starts)
    sa = np.add.reduceat(a, starts, axis=0)
    say = np.add.reduceat(a * y[:, None], starts, axis=0)
    k = a.shape[1]
    saa = np.empty((starts.size, k, k))
    for i in range(k):
        for j in range(i, k):
            saa[:, i, j] = saa[:, j, i] = np.add.reduceat(a[:, i] * a[:, j], starts)
    return n, sy, syy, sa, say, saa


def _best_delay(n, sy, syy, sa, say, saa, speeds) -> tuple[np.ndarray, np.ndarray]:
    """Delay [minutes] minimising the windows' sums of squares, and the minimum."""
    mean_y = sy / n
    mean_a = sa / n[:, None]
    s_yy = syy - n * mean_y**2
    b = say - n[:, None] * mean_a * mean_y[:, None]
    g = saa - n[:, None, None] * mean_a[:, :, None] * mean_a[:, None, :]
    w = _weights(speeds, SEARCH_MINUTES)
    ss = s_yy[:, None] - 2.0 * b @ w.T + np.einsum("tk,mkl,tl->mt", w, g, w)
    best = np.argmin(ss, axis=1)
    inner = np.clip(best, 1, SEARCH_MINUTES.size - 2)
    rows = np.arange(ss.shape[0])
    left, mid, right = ss[rows, inner - 1], ss[rows, inner], ss[rows, inner + 1]
    curvature = left - 2 * mid + right
    with np.errstate(invalid="ignore", divide="ignore"):
        shift = np.where(curvature > 0, 0.5 * (left - right) / curvature, 0.0)
    delay = SEARCH_MINUTES[inner] + np.clip(shift, -1.0, 1.0)
    return delay, ss[rows, best]


def _split(times: np.ndarray, y: np.ndarray, a: np.ndarray, speeds, before: float, after: float) -> int:
    """Index of the first sample on delay ``after`` (samples before it on ``before``), by least squares."""
    if y.size < 2:
        return 0
    p0 = a @ _weights(speeds, np.array([before]))[0]
    p1 = a @ _weights(speeds, np.array([after]))[0]
    r0, r1 = y - p0, y - p1
    r0 -= np.median(r0)
    r1 -= np.median(r1)
    cost0 = np.concatenate([[0.0], np.cumsum(r0 * r0)])
    cost1 = np.concatenate([[0.0], np.cumsum(r1 * r1)])
    total = cost0 + (cost1[-1] - cost1)
    return int(np.argmin(total))


def _monthly_delays(series: pd.Series, model) -> tuple[pd.DataFrame, np.ndarray, np.ndarray]:
    a, speeds = species_columns(model, series.index)
    y = series.to_numpy(dtype=float)
    month = series.index.tz_localize(None).to_period("M")
    codes = month.asi8
    starts = np.flatnonzero(np.concatenate([[True], codes[1:] != codes[:-1]]))
    sums = _window_sums(a, y, starts)
    delay, _ = _best_delay(*sums, speeds)
    months = pd.DataFrame({"first": starts, "n": sums[0], "delay": delay,
                           "month": month[starts].to_timestamp().tz_localize("UTC")})
    return months, a, speeds


def _spans_from_months(months: pd.DataFrame, *, min_offset: float) -> tuple[list, float, float]:
    use = months[months["n"] >= 24 / THIN_HOURS * 10]  # months with at least ten days of samples
    if len(use) < 3:
        return [], 0.0, 0.0
    reference = float(np.median(use["delay"]))
    anomaly = use["delay"].to_numpy() - reference
    spread = 1.4826 * float(np.median(np.abs(anomaly)))
    limit = max(min_offset, 5.0 * spread)
    candidate = np.abs(anomaly) > limit
    spans, current = [], []
    for row, is_candidate, value in zip(use.index, candidate, anomaly):
        if is_candidate and current and abs(value - np.median([v for _, v in current])) <= limit:
            current.append((row, value))
            continue
        if current:
            spans.append(current)
        current = [(row, value)] if is_candidate else []
    if current:
        spans.append(current)
    return spans, reference, max(spread, 1e-9)


def _locate(series, a, speeds, months, span, reference, valid, model) -> dict | None:
    """Start, end (exclusive) and offset of one span of candidate months."""
    rows = [r for r, _ in span]
    offset = float(np.median([v for _, v in span]))
    firsts = months["first"].to_numpy()
    first_row, last_row = months.index.get_loc(rows[0]), months.index.get_loc(rows[-1])
    y = series.to_numpy(dtype=float)
    t = series.index.asi8
    # start: between the previous month's first sample and the end of the first candidate month
    lo = firsts[max(first_row - 1, 0)] if first_row > 0 else 0
    hi = firsts[first_row + 1] if first_row + 1 < len(firsts) else y.size
    k0 = lo + _split(t[lo:hi], y[lo:hi], a[lo:hi], speeds, reference, reference + offset) if first_row > 0 else 0
    lo = firsts[last_row]
    hi = firsts[last_row + 2] if last_row + 2 < len(firsts) else y.size
    k1 = lo + _split(t[lo:hi], y[lo:hi], a[lo:hi], speeds, reference + offset, reference) \
        if last_row + 1 < len(firsts) else y.size
    if k1 <= k0:
        return None
    # offset over the whole span
    sums = _window_sums(a[k0:k1], y[k0:k1], np.array([0]))
    delay, _ = _best_delay(*sums, speeds)
    offset = float(delay[0]) - reference
    # boundaries to the sample at full resolution, around the hourly ones
    start = _refine(valid, series.index, k0, reference, reference + offset, speeds, model)
    end = _refine(valid, series.index, k1, reference + offset, reference, speeds, model)
    return {"start": start, "end": end, "offset_minutes": round(offset, 1), "months": len(rows)}


def _refine(valid: pd.Series, hourly: pd.DatetimeIndex, k: int, before: float, after: float, speeds,
            model) -> pd.Timestamp:
    """The first full-resolution sample on delay ``after`` between thinned samples k-2 and k+1."""
    if k <= 0:
        return valid.index[0]
    if k >= len(hourly):
        return valid.index[-1] + (valid.index[-1] - valid.index[-2])
    lo, hi = hourly[max(k - 2, 0)], hourly[min(k + 1, len(hourly) - 1)]
    piece = valid[(valid.index >= lo) & (valid.index <= hi)]
    if len(piece) <= 2:
        return hi
    a, _ = species_columns(model, piece.index)
    y = piece.to_numpy(dtype=float) - np.median(valid[(valid.index >= lo - pd.Timedelta(days=1))
                                                      & (valid.index <= hi + pd.Timedelta(days=1))])
    p0 = a @ _weights(speeds, np.array([before]))[0]
    p1 = a @ _weights(speeds, np.array([after]))[0]
    cost0 = np.concatenate([[0.0], np.cumsum((y - p0) ** 2)])
    cost1 = np.concatenate([[0.0], np.cumsum((y - p1) ** 2)])
    j = int(np.argmin(cost0 + (cost1[-1] - cost1)))
    return piece.index[j] if j < len(piece) else hi


def _merge_overlapping(rows: list[dict]) -> list[dict]:
    """One span where located spans overlap (the one covering more months keeps its offset)."""
    rows = sorted(rows, key=lambda r: r["start"])
    out: list[dict] = []
    for row in rows:
        if out and row["start"] < out[-1]["end"] and abs(row["offset_minutes"] - out[-1]["offset_minutes"]) < 10:
            last = out[-1]
            keep = last if last["months"] >= row["months"] else row
            out[-1] = dict(keep, start=min(last["start"], row["start"]), end=max(last["end"], row["end"]),
                           months=max(last["months"], row["months"]))
        else:
            out.append(row)
    return out


def timing_offsets(level_m: pd.Series, *, eras: pd.DataFrame | None = None, min_offset_minutes: float = 10.0,
                   min_span_days: float = 28.0) -> pd.DataFrame:
    """Spans of a month or more whose stamps run ahead of (or behind) the rest of the record.

    Parameters
    ----------
    level_m : pandas.Series
        Clean levels on a tz-aware UTC index [m] (NaN for gaps and flagged samples).
    eras : pandas.DataFrame, optional
        Sampling eras; not needed by the method (kept for a uniform call from quality control).
    min_offset_minutes : float, keyword-only
        Smallest offset reported [minutes].
    min_span_days : float, keyword-only
        Shortest span reported [days].

    Returns
    -------
    pandas.DataFrame
        ``start`` (first stamp of the span, as read), ``end`` (the stamp after its last sample; the span is
        [start, end)), ``offset_minutes`` (how far the stamps run ahead of true time) [minutes], ``months``
        (calendar months in the span) and ``statistic`` (offset over the robust spread of the monthly delays).
    """
    valid = level_m.dropna()
    if len(valid) < 2 or valid.index[-1] - valid.index[0] < pd.Timedelta(days=90):
        return empty_offsets()
    hourly = _thin_hourly(valid)
    try:
        model = _CompactTide(hourly)
    except (_NoTide, np.linalg.LinAlgError, ExtremesError) as err:
        logger.info("clock check skipped: %s", err or "no semidiurnal tide resolved")
        return empty_offsets()
    found = empty_offsets()
    for attempt in range(2):
        months, a, speeds = _monthly_delays(hourly, model)
        spans, reference, spread = _spans_from_months(months, min_offset=min_offset_minutes)
        rows = []
        for span in spans:
            located = _locate(hourly, a, speeds, months, span, reference, valid, model)
            if located is None:
                continue
            if located["end"] - located["start"] < pd.Timedelta(days=min_span_days):
                continue
            if abs(located["offset_minutes"]) < min_offset_minutes:
                continue
            located["statistic"] = abs(located["offset_minutes"]) / spread
            rows.append(located)
        rows = _merge_overlapping(rows)
        found = pd.DataFrame(rows) if rows else empty_offsets()
        if not rows or attempt == 1:
            break
        outside = np.ones(len(hourly), dtype=bool)
        for row in rows:
            outside &= ~((hourly.index >= row["start"]) & (hourly.index < row["end"]))
        try:
            model = _CompactTide(hourly, keep=outside, cache=model._cache)
        except (_NoTide, np.linalg.LinAlgError, ExtremesError):
            break
    if len(found):
        found["start"] = pd.DatetimeIndex(found["start"]).tz_convert("UTC")
        found["end"] = pd.DatetimeIndex(found["end"]).tz_convert("UTC")
    logger.info("clock check: %d span(s) with a timing offset", len(found))
    return found[["start", "end", "offset_minutes", "months", "statistic"]] if len(found) else found
