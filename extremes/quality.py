r"""Quality control of a tide-gauge record: flag, never delete.

:func:`check_record` gives every row read exactly one flag, in this order of precedence (the first rule
that applies wins, so the counts add up to the rows read):

1. ``missing`` -- the row holds no value (empty field, ``NaN``);
2. ``sentinel`` -- the row holds one of the declared missing codes (``--missing``);
3. ``duplicate`` -- same time stamp and same value as an earlier row (the first copy stays ``ok``);
4. ``conflicting_duplicate`` -- same time stamp as another row but a different value: every copy that
   is not itself an identical repeat is flagged (the reader cannot tell which one is right);
5. ``out_of_range`` -- outside limits derived from the record's own robust spread: with :math:`q_p` the
   p-quantile of the values, the limits are :math:`q_{0.005} - f\,S` and :math:`q_{0.995} + f\,S` with
   :math:`S = q_{0.995} - q_{0.005}` and ``range_factor`` :math:`f = 3` (no fixed numbers, so a
   macro-tidal site is not flagged) [1]_;
6. ``flatline`` -- a run of at least ``flatline_min_run`` (4) consecutive identical readings spanning at
   least ``flatline_min_hours`` (1 h) from its first to its last reading; the duration rule keeps slack
   water at sub-hourly sampling and coarse resolution (a few equal readings at high or low water) from
   being flagged;
7. ``spike`` -- :math:`|x - \tilde{x}| > k\,\hat\sigma` where :math:`\tilde{x}` is a running median of the
   neighbours: the mean of the median of the samples in the half window before and the median of those in
   the half window after (``spike_window_hours`` = 1 h in all, at least 3 samples each side, so the tide is
   followed without lag and a sample never predicts itself; flat lines are taken out first), :math:`\hat\sigma = 1.4826` times the median
   absolute deviation of :math:`x - \tilde{x}` over the record (over each sampling era) or, where larger, over
   the window around the sample (a storm surge rising fast is not a spike), and ``spike_k`` :math:`k=5` [1]_;
   a deviation under 5 cm is never a spike (about five times a gauge's accuracy, common practice). On the raw level this catches isolated bad readings; once the tide is known,
   :meth:`QualityReport.with_residual_spikes` applies the same test to the non-tidal residual;
8. ``ok``.

Other findings are reported but are not row flags: out-of-order stamps (rows whose stamp is earlier than a
stamp above it; they are sorted into place), gaps (spans with no reading), irregular sampling, candidate
datum shifts (step changes in monthly means) and completeness per year.

References
----------
.. [1] IOC, "Manual on Sea Level Measurement and Interpretation," Intergovernmental Oceanographic
   Commission, Manuals and Guides 14, UNESCO, Paris (quality-control chapters). [from memory]
.. [2] P. Fryzlewicz, "Wild binary segmentation for multiple change-point detection," Ann. Statist.,
   vol. 42, no. 6, pp. 2243-2281, 2014, doi:10.1214/14-AOS1245 (binary segmentation, the plain variant).
.. [3] P. K. Sen, "Estimates of the regression coefficient based on Kendall's tau," J. Amer. Statist.
   Assoc., vol. 63, pp. 1379-1389, 1968, doi:10.1080/01621459.1968.10480934.
"""
from __future__ import annotations

import dataclasses
import logging
import math
import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes import clock, datum_steps, sampling
from extremes.errors import DataError, ExtremesWarning
from extremes.quality_tests import _era_grids, _flat_runs, _gaps, _sorted_unique, _spikes_by_era
from extremes.records import GaugeRecord

logger = logging.getLogger(__name__)

#: row flags in order of precedence (``ok`` last)
FLAGS = ("missing", "sentinel", "duplicate", "conflicting_duplicate", "out_of_range", "flatline", "spike")
_CATEGORIES = ("ok",) + FLAGS
_CODE = {name: code for code, name in enumerate(_CATEGORIES)}
_MISSING_FLAGS = ("missing", "sentinel")
_MAD_TO_SIGMA = 1.4826


@dataclass(frozen=True, eq=False, repr=False)
class QualityReport:
    """Result of :func:`check_record`.

    Attributes
    ----------
    level_m : pandas.Series
        The clean series [m]: sorted unique UTC index, on the regular sampling grid when the sampling is
        regular (gaps as NaN rows), every flagged sample NaN; ``attrs`` ``units`` and ``datum``.
    flags : pandas.Series
        Per row read, in file order (index: the rows' UTC stamps): the flag of each row (categorical).
    counts : dict
        Flag -> number of rows (``ok`` included); the values add up to the rows read.
    gaps : pandas.DataFrame
        One row per gap (a spacing between readings longer than the interval): ``start`` and ``end``
        (first and last missing stamp), ``hours`` (spacing minus one interval) [h].
    completeness_by_year : pandas.Series
        Fraction of the expected samples present in the clean series, per calendar year (UTC).
    datum_shifts : pandas.DataFrame
        Candidate datum shifts: ``time`` (first month after the step), ``size_m`` [m], ``statistic``.
    interval : pandas.Timedelta
        Sampling interval (most common spacing).
    regular : bool
        Every stamp lies on the grid start + n * interval.
    irregular_fraction : float
        Fraction of the unique stamps off that grid.
    out_of_order_rows : numpy.ndarray
        Positions (0-based, file order) of rows whose stamp is earlier than a stamp above them.
    range_m : tuple of float
        The (lower, upper) limits of the ``out_of_range`` test [m].
    spike_scale_m : float
        Robust scale of the spike test on the raw level [m].
    datum, source : str
        From the record.
    options : dict
        The options used.
    eras : pandas.DataFrame
        Sampling eras (:func:`extremes.sampling.sampling_eras`) with each era's ``spike_scale_m``.
    timing_offsets : pandas.DataFrame
        Clock faults found (:func:`extremes.clock.timing_offsets`): ``start``, ``end`` (exclusive),
        ``offset_minutes`` (stamps ahead of true time), ``months``, ``statistic``.
    corrections : tuple of dict
        The known corrections applied by the reader (``start``, ``end``, ``add_m``, ``shift_minutes``,
        ``rows``).
    """

    level_m: pd.Series
    flags: pd.Series
    counts: dict
    gaps: pd.DataFrame
    completeness_by_year: pd.Series
    datum_shifts: pd.DataFrame
    interval: pd.Timedelta
    regular: bool
    irregular_fraction: float
    out_of_order_rows: np.ndarray
    range_m: tuple
    spike_scale_m: float
    datum: str
    source: str
    options: dict = field(default_factory=dict)
    eras: pd.DataFrame = field(default_factory=lambda: sampling.sampling_eras([]))
    timing_offsets: pd.DataFrame = field(default_factory=lambda: clock.empty_offsets())
    corrections: tuple = ()

    # ------------------------------------------------------------------------------------------------
    @property
    def n_samples(self) -> int:
        """Rows read."""
        return len(self.flags)

    @property
    def n_missing(self) -> int:
        """Rows without a reading (``missing`` + ``sentinel``)."""
        return sum(self.counts.get(name, 0) for name in _MISSING_FLAGS)

    @property
    def n_flagged(self) -> int:
        """Rows holding a reading that QC flagged (every flag but ``ok``, ``missing``, ``sentinel``)."""
        return self.n_samples - self.counts.get("ok", 0) - self.n_missing

    @property
    def gap_hours(self) -> float:
        """Total length of the gaps [h]."""
        return float(self.gaps["hours"].sum()) if len(self.gaps) else 0.0

    def complete_years(self, min_completeness: float = 0.9) -> list[int]:
        """Years whose clean series holds at least ``min_completeness`` of the expected samples."""
        good = self.completeness_by_year[self.completeness_by_year >= min_completeness]
        return [int(year) for year in good.index]

    def positions(self, flag: str, limit: int = 5) -> pd.DataFrame:
        """First ``limit`` rows with ``flag``: ``row`` (1-based data row in file order) and ``time``."""
        if flag == "out_of_order":
            where = self.out_of_order_rows[:limit]
        else:
            if flag not in _CODE:
                raise DataError(f"flag must be one of {list(_CATEGORIES) + ['out_of_order']}; got {flag!r}")
            codes = self.flags.cat.codes.to_numpy()
            where = np.flatnonzero(codes == _CODE[flag])[:limit]
        return pd.DataFrame({"row": where + 1, "time": self.flags.index[where]})

    # ------------------------------------------------------------------------------------------------
    def with_residual_spikes(self, residual_m: pd.Series, *, spike_k: float = 5.0,
                             spike_window_hours: float = 1.0) -> QualityReport:
        """Re-detect spikes on the de-tided (non-tidal) residual.

        Parameters
        ----------
        residual_m : pandas.Series
            Observed minus predicted tide on (a subset of) ``level_m``'s UTC index [m].
        spike_k : float, keyword-only
            Threshold in robust standard deviations.
        spike_window_hours : float, keyword-only
            Window of the running median of the neighbours [h] (at least 3 samples each side).

        Returns
        -------
        QualityReport
            A new report in which rows that were ``ok`` and whose residual is a spike are ``spike``; the
            clean series, counts and completeness follow.
        """
        if not isinstance(residual_m, pd.Series) or not isinstance(residual_m.index, pd.DatetimeIndex):
            raise DataError("residual_m must be a pandas Series on a DatetimeIndex")
        if residual_m.index.tz is None:
            raise DataError("residual_m has naive times; expected a tz-aware UTC index")
        _check_positive(spike_k=spike_k, spike_window_hours=spike_window_hours)
        residual = residual_m.tz_convert("UTC") if str(residual_m.index.tz) != "UTC" else residual_m
        residual = residual[~residual.index.duplicated()].reindex(self.level_m.index)
        values = residual.to_numpy(dtype=float, copy=True)
        values[np.isnan(self.level_m.to_numpy())] = np.nan
        # the residual of a span with a clock fault is polluted by the timing error, not by spikes: those
        # spans are left out of the test (and out of the surge statistics of a study)
        excluded = self.clock_fault_mask(self.level_m.index)
        eras = self.eras if len(self.eras) else sampling.sampling_eras(self.level_m.index)
        spikes, _ = _spikes_by_era(values, self.level_m.index, eras, spike_k, spike_window_hours,
                                   exclude=excluded)
        spike_times = self.level_m.index[spikes]
        codes = self.flags.cat.codes.to_numpy().copy()
        hit = (codes == _CODE["ok"]) & self.flags.index.isin(spike_times)
        codes[hit] = _CODE["spike"]
        level = self.level_m.copy()
        level.iloc[np.flatnonzero(spikes)] = np.nan
        level.attrs.update(self.level_m.attrs)
        flags = pd.Series(pd.Categorical.from_codes(codes, categories=_CATEGORIES), index=self.flags.index,
                          name="flag")
        logger.info("%s: %d more spikes on the residual", self.source, int(hit.sum()))
        options = dict(self.options, residual_spike_k=spike_k, residual_spike_window_hours=spike_window_hours)
        return dataclasses.replace(
            self, level_m=level, flags=flags, counts=_counts(codes),
            completeness_by_year=completeness_by_year(level, eras=self.eras if len(self.eras) else None),
            options=options)

    def clock_fault_mask(self, times) -> np.ndarray:
        """True at the ``times`` inside a span with a detected (uncorrected) clock fault."""
        times = pd.DatetimeIndex(times)
        mask = np.zeros(len(times), dtype=bool)
        for row in self.timing_offsets.itertuples():
            mask |= (times >= row.start) & (times < row.end)
        return mask

    def warn_clock_faults(self) -> None:
        """Warn (:class:`ExtremesWarning`) of each detected clock fault, kept out of the surge statistics."""
        for row in self.timing_offsets.itertuples():
            warnings.warn(f"{self.source}: clock fault {row.start:%Y-%m-%d %H:%M} to {row.end:%Y-%m-%d %H:%M} UTC "
                          f"(stamps {row.offset_minutes:+.0f} min ahead of true time) kept out of the tide and surge "
                          f"statistics; give --corrections with shift_minutes {-row.offset_minutes:+.0f} over that "
                          f"span to use it", ExtremesWarning, stacklevel=3)

    # ------------------------------------------------------------------------------------------------
    def to_dict(self, *, max_positions: int = 5, max_gaps: int | None = 200) -> dict:
        """The ``record`` object of the results (CONTRACT.md) plus details; JSON-ready, NaN-free."""
        index = self.flags.index
        flags = {name: int(self.counts.get(name, 0)) for name in FLAGS}
        flags["gap_hours"] = _finite(self.gap_hours)
        flags["out_of_order"] = int(len(self.out_of_order_rows))
        faults = {}
        for name in FLAGS + ("out_of_order",):
            count = flags[name]
            if count:
                where = self.positions(name, max_positions)
                faults[name] = {"count": count, "rows": [int(r) for r in where["row"]],
                                "times": [_iso(t) for t in where["time"]]}
        # the longest gaps of the whole record (listed in time order), so a long outage is never cut off
        gaps = self.gaps if max_gaps is None or len(self.gaps) <= max_gaps else \
            self.gaps.loc[self.gaps["hours"].nlargest(max_gaps).index].sort_index()
        return {
            "start": _iso(index.min()) if len(index) else None,
            "end": _iso(index.max()) if len(index) else None,
            "n_samples": self.n_samples,
            "interval_minutes": _finite(self.interval / pd.Timedelta(minutes=1)) if not pd.isna(self.interval)
            else None,
            "n_missing": self.n_missing,
            "n_flagged": self.n_flagged,
            "n_ok": int(self.counts.get("ok", 0)),
            "flags": flags,
            "datum": self.datum,
            "units": "m",
            "source": self.source,
            "regular": bool(self.regular),
            "irregular_fraction": _finite(self.irregular_fraction),
            "range_m": [_finite(v) for v in self.range_m],
            "spike_scale_m": _finite(self.spike_scale_m),
            "faults": faults,
            "n_gaps": int(len(self.gaps)),
            "gaps": [{"start": _iso(g.start), "end": _iso(g.end), "hours": _finite(g.hours)}
                     for g in gaps.itertuples()],
            "completeness_by_year": {str(int(y)): _finite(v) for y, v in self.completeness_by_year.items()},
            "datum_shift_candidates": [
                {"time": _iso(s.time), "size_m": _finite(s.size_m), "statistic": _finite(s.statistic),
                 "critical": _finite(getattr(s, "critical", None))}
                for s in self.datum_shifts.itertuples()],
            "sampling": sampling.eras_to_list(self.eras),
            "timing_offsets": [
                {"start": _iso(o.start), "end": _iso(o.end), "offset_minutes": _finite(o.offset_minutes),
                 "months": int(o.months), "statistic": _finite(o.statistic)}
                for o in self.timing_offsets.itertuples()],
            "corrections": [dict(c) for c in self.corrections],
            "options": {k: (_finite(v) if isinstance(v, float) else v) for k, v in self.options.items()},
        }

    def __repr__(self) -> str:
        return (f"QualityReport(source={self.source!r}, rows={self.n_samples}, ok={self.counts.get('ok', 0)}, "
                f"missing={self.n_missing}, flagged={self.n_flagged}, gaps={len(self.gaps)})")


def _finite(value):
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _iso(stamp) -> str | None:
    if stamp is None or pd.isna(stamp):
        return None
    return pd.Timestamp(stamp).tz_convert("UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


def _counts(codes: np.ndarray) -> dict:
    tally = np.bincount(codes.astype(np.int64), minlength=len(_CATEGORIES))
    return {name: int(tally[code]) for name, code in _CODE.items()}


def _check_positive(**values):
    for name, value in values.items():
        if not (isinstance(value, (int, float, np.floating, np.integer)) and math.isfinite(value) and value > 0):
            raise DataError(f"{name} must be a positive number; got {value!r}")


def _flag_duplicates(stamps: np.ndarray, values: np.ndarray, codes: np.ndarray, *, any_out_of_order: bool):
    """Flag identical repeats and conflicting values at one stamp among the rows with a reading (in
    ``codes``, in place); return the rows that remain, in time order."""
    valid_rows = np.flatnonzero(codes == 0)
    if not any_out_of_order and np.all(stamps[1:] != stamps[:-1]):
        return valid_rows  # the common case: strictly increasing stamps, no duplicates
    order = valid_rows[np.argsort(stamps[valid_rows], kind="stable")]
    ts = stamps[order]
    repeated = np.zeros(len(ts), dtype=bool)
    repeated[1:] = ts[1:] == ts[:-1]
    repeated[:-1] |= repeated[1:]
    # sort the rows of repeated stamps by (stamp, value, row) to find identical and conflicting copies
    rows = order[repeated]
    rows = rows[np.lexsort((rows, values[rows], stamps[rows]))]
    ts, vs = stamps[rows], values[rows]
    if len(rows):
        same_time = np.concatenate([[False], ts[1:] == ts[:-1]])
        identical = same_time & np.concatenate([[False], vs[1:] == vs[:-1]])
        group = np.cumsum(~same_time) - 1
        starts = np.flatnonzero(~same_time)
        ends = np.append(starts[1:], len(ts)) - 1
        conflicting_group = vs[ends] != vs[starts]  # values are sorted within a stamp
        conflicting = conflicting_group[group] & ~identical
        codes[rows[identical]] = _CODE["duplicate"]
        codes[rows[conflicting]] = _CODE["conflicting_duplicate"]
    return order[codes[order] == 0]


def _flag_out_of_range(uv: np.ndarray, u_rows: np.ndarray, codes: np.ndarray, range_factor: float):
    """Flag readings outside the record's robust range (0.5-99.5 % quantiles widened by ``range_factor``
    spreads; never fixed numbers, METHODS sec. 7); set them NaN in ``uv``; return the limits [m]."""
    q_lo, q_hi = np.quantile(uv, [0.005, 0.995])
    spread = q_hi - q_lo
    lower, upper = q_lo - range_factor * spread, q_hi + range_factor * spread
    bad_range = (uv < lower) | (uv > upper)
    codes[u_rows[bad_range]] = _CODE["out_of_range"]
    uv[bad_range] = np.nan
    return lower, upper


# ----------------------------------------------------------------------------------------------------------
def check_record(record: GaugeRecord, *, range_factor: float = 3.0, spike_k: float = 5.0,
                 spike_window_hours: float = 1.0, flatline_min_run: int = 4, flatline_min_hours: float = 1.0,
                 shift_threshold: float | None = None, min_month_completeness: float = 0.5,
                 min_segment_months: int = 12, detect_clock_faults: bool = True,
                 detect_datum_steps: bool = True) -> QualityReport:
    """Quality-control a record: flag every row (see the module notes for rules and precedence).

    Parameters
    ----------
    record : GaugeRecord
        From :func:`extremes.records.read_record`.
    range_factor : float, keyword-only
        Width of the physical-range margin in units of the record's 0.5-99.5 % spread.
    spike_k : float, keyword-only
        Spike threshold in robust standard deviations of (level - running median).
    spike_window_hours : float, keyword-only
        Window of the running median of the neighbours for spikes [h] (at least 3 samples each side).
    flatline_min_run : int, keyword-only
        Fewest consecutive identical readings that make a flat line.
    flatline_min_hours : float, keyword-only
        Shortest time from the first to the last reading of a flat line [h].
    shift_threshold : float, keyword-only
        A fixed critical value of the datum-step statistic (default: simulated for the record's length and
        autocorrelation, :mod:`extremes.datum_steps`).
    min_month_completeness : float, keyword-only
        Months with a smaller fraction of samples are left out of the datum-shift test.
    min_segment_months : int, keyword-only
        Shortest stretch between two datum-shift candidates [months].
    detect_clock_faults : bool, keyword-only
        Look for spans with a timing offset (:mod:`extremes.clock`).
    detect_datum_steps : bool, keyword-only
        Look for datum-step candidates (:mod:`extremes.datum_steps`). Both are gauge checks: model output
        is on one clock and one datum, and the model-point mode leaves them out.

    Returns
    -------
    QualityReport

    Raises
    ------
    DataError
        No row holds a reading, or an option is out of range.
    """
    if not isinstance(record, GaugeRecord):
        raise DataError(f"record must be a GaugeRecord from read_record; got {type(record).__name__}")
    _check_positive(range_factor=range_factor, spike_k=spike_k, spike_window_hours=spike_window_hours,
                    flatline_min_hours=flatline_min_hours)
    if shift_threshold is not None:
        _check_positive(shift_threshold=shift_threshold)
    if int(flatline_min_run) < 2:
        raise DataError(f"flatline_min_run must be >= 2; got {flatline_min_run!r}")
    options = dict(range_factor=range_factor, spike_k=spike_k, spike_window_hours=spike_window_hours,
                   flatline_min_run=int(flatline_min_run), flatline_min_hours=flatline_min_hours,
                   shift_threshold=shift_threshold, min_month_completeness=min_month_completeness,
                   min_segment_months=int(min_segment_months), detect_clock_faults=bool(detect_clock_faults),
                   detect_datum_steps=bool(detect_datum_steps))
    series = record.water_level_m
    index = series.index
    if index.tz is None:
        raise DataError(f"{record.source}: record times are naive; expected tz-aware UTC")
    unit = "ns"
    stamps = index.as_unit("ns").asi8
    values = series.to_numpy(dtype=float)
    n = len(values)
    codes = np.zeros(n, dtype=np.int8)
    is_code = np.asarray(record.is_missing_code, dtype=bool)
    nan = np.isnan(values)
    codes[nan & ~is_code] = _CODE["missing"]
    codes[is_code] = _CODE["sentinel"]
    if not (codes == 0).any():
        raise DataError(f"{record.source}: no row holds a reading ({n} rows, all missing)")

    # out-of-order stamps (reported, sorted into place)
    running_max = np.maximum.accumulate(stamps)
    out_of_order = np.flatnonzero(stamps[1:] < running_max[:-1]) + 1

    # duplicates among rows with a reading: identical repeats, then conflicting values at one stamp
    u_rows = _flag_duplicates(stamps, values, codes, any_out_of_order=len(out_of_order) > 0)
    ut, uv = stamps[u_rows], values[u_rows].copy()

    # sampling eras; each era on its own grid when its stamps lie on it (gaps as NaN rows)
    all_unique = _sorted_unique(stamps)
    eras = sampling.sampling_eras(all_unique)
    grid_times, steps, off_grid = _era_grids(all_unique, eras, unit)
    irregular_fraction = float(off_grid) / max(len(all_unique), 1)
    regular = off_grid == 0 and bool(eras["regular"].all()) if len(eras) else True
    if off_grid:
        warnings.warn(f"{record.source}: irregular sampling: {100 * irregular_fraction:.2f}% of the stamps are "
                      f"off their era's grid; those eras keep the stamps as read", ExtremesWarning, stacklevel=2)

    # physical range from the record's robust spread
    lower, upper = _flag_out_of_range(uv, u_rows, codes, range_factor)

    # the working series on the eras' grids
    position = np.searchsorted(grid_times, ut)
    work = np.full(len(grid_times), np.nan)
    work[position] = uv
    grid_index = pd.DatetimeIndex(pd.to_datetime(grid_times, unit=unit, utc=True), name="time")

    # flat lines, then spikes on the raw level without them, each era with its own interval
    flat = _flat_runs(work, grid_times, min_run=int(flatline_min_run),
                      min_span=int(pd.Timedelta(hours=flatline_min_hours) / pd.Timedelta(1, unit=unit)),
                      steps=steps)
    work[flat] = np.nan
    spikes, scales = _spikes_by_era(work, grid_index, eras, spike_k, spike_window_hours)
    spike_scale = scales[int(np.argmax(eras["n_stamps"].to_numpy()))] if len(scales) else float("nan")
    eras = eras.assign(spike_scale_m=scales) if len(eras) else eras
    work[spikes] = np.nan
    present = ~np.isnan(uv)
    flat_at = flat[position] & present
    spike_at = spikes[position] & present & ~flat_at
    codes[u_rows[flat_at]] = _CODE["flatline"]
    codes[u_rows[spike_at]] = _CODE["spike"]

    level = pd.Series(work, index=grid_index, name="level_m")
    level.attrs.update({"units": "m", "datum": record.datum})
    flags = pd.Series(pd.Categorical.from_codes(codes, categories=_CATEGORIES), index=index, name="flag")
    reading_times = _sorted_unique(stamps[~nan & ~is_code])
    gaps = _gaps(reading_times, eras, unit)
    completeness = completeness_by_year(level, eras=eras)
    shifts = datum_steps.datum_shift_candidates(level, eras=eras, threshold=shift_threshold,
                                                min_month_completeness=min_month_completeness,
                                                min_segment_months=int(min_segment_months)) \
        if detect_datum_steps else datum_steps.empty_shifts()
    offsets = clock.timing_offsets(level, eras=eras) if detect_clock_faults else clock.empty_offsets()
    report = QualityReport(
        level_m=level, flags=flags, counts=_counts(codes), gaps=gaps, completeness_by_year=completeness,
        datum_shifts=shifts, interval=record.interval, regular=regular, irregular_fraction=irregular_fraction,
        out_of_order_rows=out_of_order, range_m=(float(lower), float(upper)), spike_scale_m=float(spike_scale),
        datum=record.datum, source=record.source, options=options, eras=eras, timing_offsets=offsets,
        corrections=tuple(record.meta.get("corrections", ())))
    logger.info("%r", report)
    return report


# ----------------------------------------------------------------------------------------------------------
def completeness_by_year(level_m: pd.Series, *, interval: pd.Timedelta | None = None,
                         water_year_start_month: int = 1, eras: pd.DataFrame | None = None) -> pd.Series:
    """Fraction of each year covered by valid (finite) samples, each counting its era's interval.

    Parameters
    ----------
    level_m : pandas.Series
        Level on a tz-aware UTC index [m]; NaN counts as absent.
    interval : pandas.Timedelta, optional
        One sampling interval for every sample. Default: each sample's era interval
        (:func:`extremes.sampling.sampling_eras`, from ``eras`` or from the index).
    water_year_start_month : int, keyword-only
        First month of the year (1: calendar year). A year is labelled by the calendar year it starts in.
    eras : pandas.DataFrame, optional
        Sampling eras of the record (:func:`extremes.sampling.sampling_eras`).

    Returns
    -------
    pandas.Series
        Completeness in [0, 1] indexed by year (int), from the first to the last year of the index: the
        time the valid samples represent over the year's length, so each era is measured against its own
        interval (METHODS sec. 14).
    """
    index = level_m.index
    if not isinstance(index, pd.DatetimeIndex) or index.tz is None:
        raise DataError("level_m must be on a tz-aware UTC DatetimeIndex")
    if not 1 <= int(water_year_start_month) <= 12:
        raise DataError(f"water_year_start_month must be 1..12; got {water_year_start_month!r}")
    if len(index) == 0:
        return pd.Series([], dtype=float, name="completeness")
    index = index.tz_convert("UTC")
    if interval is not None and not pd.isna(interval):
        weights = np.full(len(index), pd.Timedelta(interval).value, dtype=np.int64)
    else:
        weights = sampling.sample_intervals_ns(index, eras)
    if not weights.any():
        return pd.Series([], dtype=float, name="completeness")
    year = index.year.to_numpy()
    if water_year_start_month != 1:
        year = year - (index.month.to_numpy() < water_year_start_month)
    finite = np.isfinite(level_m.to_numpy(dtype=float))
    first, last = int(year.min()), int(year.max())
    present_ns = np.bincount(year[finite] - first, weights=weights[finite].astype(float),
                             minlength=last - first + 1)
    years = np.arange(first, last + 1)
    starts = pd.to_datetime([f"{y}-{water_year_start_month:02d}-01" for y in years], utc=True)
    ends = pd.to_datetime([f"{y + 1}-{water_year_start_month:02d}-01" for y in years], utc=True)
    length_ns = (ends - starts).as_unit("ns").asi8.astype(float)
    out = pd.Series(np.minimum(1.0, present_ns / length_ns), index=years, name="completeness")
    out.index.name = "year"
    out.attrs["water_year_start_month"] = int(water_year_start_month)
    return out


datum_shift_candidates = datum_steps.datum_shift_candidates


__all__ = ["FLAGS", "QualityReport", "check_record", "completeness_by_year", "datum_shift_candidates"]
