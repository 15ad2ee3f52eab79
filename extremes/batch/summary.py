"""The summary of a batch: one row per station in ``summary.csv`` and ``summary.nc``.

:class:`BatchSummary` holds every station's outcome; it orders the stations along the coast
(:mod:`extremes.batch.coast`), checks each 100-year level against its neighbours', and gives the table
(:meth:`BatchSummary.to_frame`) and the CF NetCDF dataset (:meth:`BatchSummary.to_dataset`).
:func:`write_summaries` writes both atomically; they describe every station of the folder and are
rewritten on every run, a resumed one included.
"""
from __future__ import annotations

import contextlib
import functools
import logging
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.batch.coast import CoastOrder, NeighbourCheck, coast_order, neighbour_consistency
from extremes.outputs import write_bytes_atomic, write_text_atomic

logger = logging.getLogger(__name__)

#: the return period of the summary's headline columns (``level_100_m`` ...) and of the neighbour check [years]
HEADLINE_PERIOD_YEARS = 100.0


@dataclass(frozen=True, repr=False)
class BatchSummary:
    """Outcome of a batch: one entry per station, in the order the stations were given.

    Attributes
    ----------
    out_dir : pathlib.Path
        Folder of the station folders and the summaries.
    outcomes : tuple of dict
        Per station: ``station``, ``status`` (``"ok"`` or the error message), ``source``, ``lat``, ``lon``,
        ``seed``, ``skipped`` (results found from an earlier run), ``seconds`` [s], ``recommended_method``,
        ``chainage``, ``datum``, ``return_levels`` (rows ``method, return_period_years, level_m, lower_m,
        upper_m, confidence``), ``assessment`` (the station's verdict ``ok``/``check``/``unreliable``, empty
        when its results carry none) and ``assessment_reasons``, ``record_years``, ``report`` (relative link
        to the station's report or results), ``epoch_year``, ``warnings``, ``stage_seconds`` (time by study
        stage [s]) and ``worker`` (the dask worker that ran it; not in the summary files).
    periods_years : tuple of float
        Return periods of the summary columns. [years]
    seconds : float
        Wall-clock time of the run. [s]
    mode : str
        ``"full"`` or ``"points"`` (see :class:`extremes.batch.run.BatchSettings`).
    """

    out_dir: Path
    outcomes: tuple
    periods_years: tuple
    seconds: float = 0.0
    mode: str = "full"

    def __repr__(self) -> str:
        return (f"BatchSummary(out_dir={str(self.out_dir)!r}, n_stations={len(self.outcomes)}, "
                f"n_failed={self.n_failed}, n_skipped={self.n_skipped})")

    @property
    def n_ok(self) -> int:
        """Stations with results (new or from an earlier run)."""
        return sum(o["status"] == "ok" for o in self.outcomes)

    @property
    def n_failed(self) -> int:
        """Stations whose study failed."""
        return len(self.outcomes) - self.n_ok

    @property
    def n_skipped(self) -> int:
        """Stations skipped because their folder already held complete results."""
        return sum(bool(o["skipped"]) for o in self.outcomes)

    @property
    def ok(self) -> bool:
        """True when every station succeeded."""
        return self.n_failed == 0

    @functools.cached_property
    def order(self) -> CoastOrder:
        """The stations' order along the coast (:func:`extremes.batch.coast.coast_order`)."""
        ok = [o["status"] == "ok" for o in self.outcomes]
        return coast_order([o["lat"] for o in self.outcomes], [o["lon"] for o in self.outcomes],
                           [o.get("chainage", np.nan) for o in self.outcomes], placed=ok)

    @functools.cached_property
    def neighbours(self) -> tuple[NeighbourCheck, ...]:
        """Each station's neighbour consistency at the headline period."""
        _, recommended, confidence = self._levels()
        j = self.headline_index
        nan = np.full(len(self.outcomes), np.nan)
        pick = (lambda key: recommended[key][:, j]) if j is not None else (lambda key: nan)
        conf = confidence[np.isfinite(confidence)]
        return tuple(neighbour_consistency(
            [o["station"] for o in self.outcomes], pick("level_m"), pick("lower_m"), pick("upper_m"),
            order=self.order, lat=[o["lat"] for o in self.outcomes], lon=[o["lon"] for o in self.outcomes],
            confidence=float(conf[0]) if conf.size else 0.95, period_years=HEADLINE_PERIOD_YEARS))

    @property
    def headline_index(self) -> int | None:
        """Index of the headline period in :attr:`periods_years` (None when absent)."""
        return next((j for j, p in enumerate(self.periods_years) if np.isclose(p, HEADLINE_PERIOD_YEARS)), None)

    @property
    def methods(self) -> tuple[str, ...]:
        """Methods found in any station's results, in order of first appearance."""
        seen: dict[str, None] = {}
        for outcome in self.outcomes:
            for row in outcome["return_levels"]:
                seen.setdefault(str(row["method"]), None)
        return tuple(seen)

    @functools.cached_property
    def _level_arrays(self):
        return self._compute_levels()

    def _levels(self):
        """Cached :meth:`_compute_levels` (a summary does not change)."""
        return self._level_arrays

    def _compute_levels(self):
        """Arrays (station, method, period) of level, lower, upper [m], and (station, period) recommended."""
        methods = self.methods
        periods = np.asarray(self.periods_years, dtype=float)
        shape = (len(self.outcomes), len(methods), len(periods))
        arrays = {k: np.full(shape, np.nan) for k in ("level_m", "lower_m", "upper_m")}
        confidence = np.full(len(self.outcomes), np.nan)
        for i, outcome in enumerate(self.outcomes):
            for row in outcome["return_levels"]:
                hit = np.flatnonzero(np.isclose(periods, float(row["return_period_years"]), rtol=1e-9))
                if hit.size == 0:
                    continue
                m = methods.index(str(row["method"]))
                for key in arrays:
                    value = row.get(key)
                    arrays[key][i, m, hit[0]] = np.nan if value is None else float(value)
                if row.get("confidence") is not None:
                    confidence[i] = float(row["confidence"])
        recommended = {k: np.full((len(self.outcomes), len(periods)), np.nan) for k in arrays}
        for i, outcome in enumerate(self.outcomes):
            if outcome["recommended_method"] in methods:
                m = methods.index(outcome["recommended_method"])
                for key in arrays:
                    recommended[key][i] = arrays[key][i, m]
        return arrays, recommended, confidence

    def to_frame(self) -> pd.DataFrame:
        """The ``summary.csv`` table: one row per station.

        Columns: ``station, status, recommended_method, level_100_m, lower_100_m, upper_100_m, assessment,
        consistency, lat, lon, chainage, coast_order, record_years, datum, confidence, seed, skipped,
        seconds, n_warnings, source, report, assessment_reasons, consistency_reasons``, then for every
        return period T the
        recommended method's ``level_T_m, lower_T_m, upper_T_m`` and every method's
        ``<method>_level_T_m, <method>_lower_T_m, <method>_upper_T_m`` (T written as in ``%g``). [m]
        """
        return self._table.copy()

    @functools.cached_property
    def _table(self) -> pd.DataFrame:
        """The summary table, built once."""
        arrays, recommended, confidence = self._levels()
        frame = pd.DataFrame({
            "station": [o["station"] for o in self.outcomes],
            "status": [o["status"] for o in self.outcomes],
            "recommended_method": [o["recommended_method"] or "" for o in self.outcomes],
        })
        periods = list(self.periods_years)
        head = self.headline_index
        for key in ("level", "lower", "upper"):
            frame[f"{key}_100_m"] = recommended[f"{key}_m"][:, head] if head is not None else np.nan
        frame["assessment"] = [o.get("assessment", "") for o in self.outcomes]
        frame["consistency"] = [c.status for c in self.neighbours]
        frame["lat"] = [float(o["lat"]) for o in self.outcomes]
        frame["lon"] = [float(o["lon"]) for o in self.outcomes]
        frame["chainage"] = [float(o.get("chainage", np.nan)) for o in self.outcomes]
        frame["coast_order"] = list(self.order.rank)
        frame["record_years"] = [round(float(o.get("record_years", np.nan)), 3) for o in self.outcomes]
        frame["datum"] = [o["datum"] for o in self.outcomes]
        frame["confidence"] = confidence
        frame["seed"] = [o["seed"] for o in self.outcomes]
        frame["skipped"] = [bool(o["skipped"]) for o in self.outcomes]
        frame["seconds"] = [round(float(o["seconds"]), 3) for o in self.outcomes]
        frame["n_warnings"] = [len(o["warnings"]) for o in self.outcomes]
        frame["source"] = [o["source"] for o in self.outcomes]
        frame["report"] = [o.get("report", "") for o in self.outcomes]
        frame["assessment_reasons"] = ["; ".join(o.get("assessment_reasons", ())) for o in self.outcomes]
        frame["consistency_reasons"] = ["; ".join(c.reasons) for c in self.neighbours]
        columns = {}
        for j, period in enumerate(periods):
            if j != head:
                for key in ("level", "lower", "upper"):
                    columns[f"{key}_{period:g}_m"] = recommended[f"{key}_m"][:, j]
        for m, method in enumerate(self.methods):
            for j, period in enumerate(periods):
                for key in ("level", "lower", "upper"):
                    columns[f"{method}_{key}_{period:g}_m"] = arrays[f"{key}_m"][:, m, j]
        return pd.concat([frame, pd.DataFrame(columns, index=frame.index)], axis=1)

    def to_dataset(self):
        """The ``summary.nc`` content: an :class:`xarray.Dataset` with a ``station`` dimension (CF-1.8)."""
        import xarray as xr

        from extremes import __version__

        arrays, recommended, confidence = self._levels()
        names = np.array([o["station"] for o in self.outcomes], dtype=object)
        periods = np.asarray(self.periods_years, dtype=float)
        methods = np.array(self.methods, dtype=object)
        dims3 = ("station", "method", "return_period")
        dims2 = ("station", "return_period")
        long = {"level_m": "still-water return level", "lower_m": "lower bound of the return-level interval",
                "upper_m": "upper bound of the return-level interval"}
        data = {}
        for key, text in long.items():
            data[key] = (dims3, arrays[key], {"units": "m", "long_name": f"{text} by method"})
            data[f"recommended_{key}"] = (dims2, recommended[key],
                                          {"units": "m", "long_name": f"{text} of the recommended method"})
        data["status"] = ("station", np.array([o["status"] for o in self.outcomes], dtype=object),
                          {"long_name": "outcome of the station's study: ok or the error message"})
        data["recommended_method"] = ("station", np.array([o["recommended_method"] or "" for o in self.outcomes],
                                                          dtype=object), {"long_name": "recommended method"})
        data["assessment"] = ("station", np.array([o.get("assessment", "") for o in self.outcomes], dtype=object),
                              {"long_name": "verdict of the station's own plausibility checks: ok, check or "
                                            "unreliable (empty: not assessed)"})
        data["assessment_reasons"] = ("station", np.array(["; ".join(o.get("assessment_reasons", ()))
                                                           for o in self.outcomes], dtype=object),
                                      {"long_name": "reasons of the verdict"})
        data["consistency"] = ("station", np.array([c.status for c in self.neighbours], dtype=object),
                               {"long_name": "agreement of the 100-year level with the neighbouring stations: "
                                             "ok, check or not assessed"})
        data["consistency_reasons"] = ("station", np.array(["; ".join(c.reasons) for c in self.neighbours],
                                                           dtype=object),
                                       {"long_name": "reasons of the neighbour consistency verdict"})
        data["record_years"] = ("station", np.array([float(o.get("record_years", np.nan)) for o in self.outcomes]),
                                {"units": "year", "long_name": "length of the record used"})
        data["coast_order"] = ("station", np.array(self.order.rank, dtype=np.int64),
                               {"long_name": f"position along the coast (0 first), ordered by {self.order.basis}"})
        data["datum"] = ("station", np.array([str(o["datum"]) for o in self.outcomes], dtype=object),
                         {"long_name": "vertical datum of the levels"})
        data["confidence"] = ("station", confidence, {"units": "1", "long_name": "confidence level of the interval bounds"})
        data["seed"] = ("station", np.array([o["seed"] for o in self.outcomes], dtype=np.int64),
                        {"long_name": "random seed of the station's study"})
        coords = {
            "station": ("station", names, {"long_name": "station name", "cf_role": "timeseries_id"}),
            "method": ("method", methods, {"long_name": "return-level method"}),
            "return_period": ("return_period", periods, {"units": "year", "long_name": "return period"}),
            "lat": ("station", np.array([float(o["lat"]) for o in self.outcomes]),
                    {"units": "degrees_north", "standard_name": "latitude", "long_name": "latitude"}),
            "lon": ("station", np.array([float(o["lon"]) for o in self.outcomes]),
                    {"units": "degrees_east", "standard_name": "longitude", "long_name": "longitude"}),
            "chainage": ("station", np.array([float(o.get("chainage", np.nan)) for o in self.outcomes]),
                         {"long_name": "distance along the coast (units as given)"}),
        }
        return xr.Dataset(data, coords=coords, attrs={
            "Conventions": "CF-1.8", "title": "extremes batch summary: still-water return levels by station",
            "source": f"extremes {__version__}", "featureType": "timeSeries",
            "n_failed": self.n_failed, "n_skipped": self.n_skipped,
        })

    def to_dict(self) -> dict:
        """JSON-ready summary: counts, and per station the status and headline numbers."""
        frame = self.to_frame()
        stations = []
        for row in frame.to_dict("records"):
            stations.append({k: (_none_if_nan(v) if isinstance(v, float) else v) for k, v in row.items()
                             if k in ("station", "status", "recommended_method", "level_100_m", "lower_100_m",
                                      "upper_100_m", "assessment", "consistency", "consistency_reasons",
                                      "lat", "lon", "chainage", "record_years", "seed", "skipped", "seconds",
                                      "report")})
        return {"out_dir": str(self.out_dir), "n_stations": len(self.outcomes), "n_ok": self.n_ok,
                "n_failed": self.n_failed, "n_skipped": self.n_skipped, "seconds": self.seconds,
                "n_inconsistent": sum(c.status == "check" for c in self.neighbours),
                "order_basis": self.order.basis, "periods_years": list(self.periods_years), "stations": stations}


def _none_if_nan(value):
    try:
        return None if not np.isfinite(value) else value
    except TypeError:
        return value


def write_summaries(summary: BatchSummary, out_dir: str | os.PathLike | None = None) -> tuple[Path, Path]:
    """Write ``summary.csv`` and ``summary.nc`` to ``out_dir`` (default ``summary.out_dir``) atomically.

    The summaries describe the whole folder and are replaced on every run.
    """
    out_dir = Path(out_dir if out_dir is not None else summary.out_dir)
    csv_path = write_text_atomic(out_dir / "summary.csv", summary.to_frame().to_csv(index=False), overwrite=True)
    nc_path = out_dir / "summary.nc"
    fd, tmp = tempfile.mkstemp(prefix=".summary.", suffix=".nc.tmp", dir=out_dir)
    os.close(fd)
    try:
        summary.to_dataset().to_netcdf(tmp, engine="netcdf4")
        write_bytes_atomic(nc_path, Path(tmp).read_bytes(), overwrite=True)
    finally:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
    logger.info("wrote %s and %s", csv_path, nc_path)
    return csv_path, nc_path


