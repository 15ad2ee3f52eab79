"""What one dask task does: study one station, or the points of one block of a model output.

Every station ends in one *outcome* (a plain dict, cheap to send back from a worker): its status, seed,
position, verdict and return levels, read back from the ``results.json`` written, so that a station studied
now and one found done by a later run give the same numbers.

Two per-station studies are provided:

- :func:`study_station`: the full study (:func:`extremes.study.run_study` and
  :func:`extremes.results.write_study`), figures and report included unless ``figures=False``;
- :func:`study_point`: the model-point mode: the same study without what points do not need (the hourly
  joint-probability check method, figures, the per-point report and tables). The recommended method, its levels
  and intervals are those of the full study (the hourly method is a comparison method that the
  recommendation rule never picks while the skew-surge method is available; :data:`POINT_TOLERANCE_M`).
"""
from __future__ import annotations

import contextlib
import dataclasses
import json
import logging
import os
import time
import warnings
import zlib
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.batch.gridded import block_series
from extremes.batch.inputs import GriddedBlock, Station
from extremes.constants import DAYS_PER_YEAR
from extremes.errors import ExtremesError, OutputError

logger = logging.getLogger(__name__)

#: largest difference allowed between the model-point mode and the full study in any recommended level
#: or interval bound [m] (tested in tests/test_batch_points.py; the two differ by floating-point rounding
#: of the tide fit's normal equations only)
POINT_TOLERANCE_M = 1e-6


def station_seed(base_seed: int, name: str) -> int:
    """Seed of station ``name`` in a batch with seed ``base_seed``.

    ``SeedSequence([base_seed, crc32(name)])`` (stable across processes and machines, unlike ``hash()``),
    reduced to one 32-bit integer so it can be given to ``extremes run --seed`` to reproduce the station.
    """
    key = zlib.crc32(str(name).encode("utf-8"))
    return int(np.random.SeedSequence([int(base_seed), key]).generate_state(1, dtype=np.uint32)[0])


def completed_results(station_dir: str | os.PathLike) -> dict | None:
    """The ``results.json`` of a finished station folder, or None if the folder holds no complete results."""
    path = Path(station_dir) / "results.json"
    try:
        results = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(results, dict) or "recommended_method" not in results or not isinstance(
            results.get("return_levels"), list):
        return None
    return results


def study_station(station: Station, *, options, seed: int, out_dir: Path, overwrite: bool = False,
                  figures: bool = True, hourly_check: bool = True, tables: bool = True, reference=None,
                  gauge_checks: bool = True) -> dict:
    """The full study of one station, written to ``out_dir``; returns its ``results.json`` mapping.

    Runs :func:`extremes.study.run_study` (a file) or :func:`extremes.study.run_study_series` (an
    in-memory series) with ``options`` whose seed is replaced by ``seed``, then
    :func:`extremes.results.write_study` (with the figures and HTML report unless ``figures=False``).
    ``hourly_check=False`` leaves out the hourly joint-probability comparison method; ``tables=False`` the
    CSV tables; ``reference``: one prepared long gauge (:func:`extremes.transfer.stage.load_reference`)
    serving every station; ``gauge_checks=False`` leaves out the clock-fault and datum-step checks, which
    are for gauges (model output is on one clock and one datum).
    """
    from extremes import results as results_module
    from extremes import study as study_module

    if options is None:
        options = study_module.StudyOptions()
    options = dataclasses.replace(options, seed=int(seed))
    extra = {} if hourly_check else {"hourly_check": False}
    if reference is not None:
        extra["reference"] = reference
    if station.level_m is not None:
        result = study_module.run_study_series(station.level_m, datum=station.datum, source=station.source,
                                               options=options, gauge_checks=gauge_checks, **extra)
    else:
        result = study_module.run_study(station.path, reader=dict(station.reader), options=options,
                                        gauge_checks=gauge_checks, **extra)
    results_module.write_study(result, out_dir, overwrite=overwrite, figures=figures, tables=tables)
    document = completed_results(out_dir)
    if document is None:
        raise OutputError(f"{out_dir}: the study wrote no complete results.json")
    return document


def study_point(station: Station, *, options, seed: int, out_dir: Path, overwrite: bool = False) -> dict:
    """The model-point mode of :func:`study_station`: no hourly check method, figures, report or tables,
    and no clock-fault or datum-step checks (gauge checks: a model point is on one clock and one datum).

    Writes ``results.json`` (every number) and the saved models (so ``extremes rerun`` works on a point).
    """
    return study_station(station, options=options, seed=seed, out_dir=out_dir, overwrite=overwrite,
                         figures=False, hourly_check=False, tables=False, gauge_checks=False)


def one_line(err: BaseException) -> str:
    """An error as one line of text (its type named unless it is one of ours)."""
    text = " ".join(str(err).split())
    if not isinstance(err, ExtremesError):
        text = f"{type(err).__name__}: {text}" if text else type(err).__name__
    return text or type(err).__name__


def _record_years(results: Mapping) -> float:
    value = results.get("record_years")
    if isinstance(value, (int, float)) and np.isfinite(value):
        return float(value)
    record = results.get("record") if isinstance(results.get("record"), dict) else {}
    try:
        span = pd.Timestamp(record["end"]) - pd.Timestamp(record["start"])
    except (KeyError, TypeError, ValueError):
        return float("nan")
    return float(span / pd.Timedelta(days=DAYS_PER_YEAR))


def _assessment(results: Mapping) -> tuple[str, list[str]]:
    """The station's own verdict (``assessment.status`` and ``reasons`` of results.json), when present."""
    found = results.get("assessment")
    if not isinstance(found, dict) or not isinstance(found.get("status"), str):
        return "", []
    reasons = found.get("reasons") if isinstance(found.get("reasons"), list) else []
    return found["status"], [str(r) for r in reasons]


def outcome(station: Station, *, status: str, seed: int, results: Mapping | None, skipped: bool,
            seconds: float, messages: Sequence[str] = (), station_dir: Path | None = None) -> dict:
    """The outcome of one station (see :class:`extremes.batch.summary.BatchSummary`)."""
    levels, recommended, datum = [], None, station.datum
    assessment, reasons, years, report, epoch = "", [], float("nan"), "", float("nan")
    if results is not None:
        recommended = results.get("recommended_method")
        if isinstance(results.get("record"), dict):
            datum = results["record"].get("datum", datum)
        for row in results.get("return_levels", []):
            levels.append({k: row.get(k) for k in ("method", "return_period_years", "level_m", "lower_m",
                                                  "upper_m", "confidence")})
        assessment, reasons = _assessment(results)
        years = _record_years(results)
        msl = results.get("mean_sea_level") if isinstance(results.get("mean_sea_level"), dict) else {}
        found = msl.get("epoch_year", results.get("epoch_year"))
        epoch = float(found) if isinstance(found, (int, float)) else float("nan")
        if station_dir is not None:
            page = "report.html" if (station_dir / "report.html").is_file() else "results.json"
            report = f"{station.name}/{page}"
    return {"station": station.name, "status": status, "source": station.source or str(station.path),
            "lat": station.lat, "lon": station.lon, "chainage": station.chainage, "seed": seed,
            "skipped": skipped, "seconds": seconds, "recommended_method": recommended, "datum": datum,
            "return_levels": levels, "assessment": assessment, "assessment_reasons": reasons,
            "record_years": years, "epoch_year": epoch, "report": report, "warnings": list(messages),
            "stage_seconds": dict(results.get("timings_s") or {}) if results is not None and not skipped else {}}


def finished_outcome(station: Station, *, base_seed: int, out_dir: Path) -> dict | None:
    """The outcome of a station whose folder already holds complete results, else None."""
    station_dir = Path(out_dir) / station.name
    done = completed_results(station_dir)
    if done is None:
        return None
    return outcome(station, status="ok", seed=station_seed(base_seed, station.name), results=done, skipped=True,
                   seconds=0.0, station_dir=station_dir)


def run_station(station: Station, *, study, options, base_seed: int, out_dir: Path, overwrite: bool) -> dict:
    """Study one station (or read it back when done before); its outcome. Never raises for the study."""
    start = time.perf_counter()
    station_dir = Path(out_dir) / station.name
    seed = station_seed(base_seed, station.name)
    if not overwrite:
        done = finished_outcome(station, base_seed=base_seed, out_dir=out_dir)
        if done is not None:
            return done
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            # an incomplete folder left by an interrupted run is ours to replace
            results = study(station, options=options, seed=seed, out_dir=station_dir,
                            overwrite=overwrite or station_dir.exists())
            status = "ok"
        except Exception as err:  # noqa: BLE001 - failure isolation: one station's error goes in its status
            logger.debug("station %s failed", station.name, exc_info=True)
            results, status = None, one_line(err) or "failed"
        messages = [" ".join(str(w.message).split()) for w in caught]
    return outcome(station, status=status, seed=seed, results=results, skipped=False,
                   seconds=time.perf_counter() - start, messages=messages, station_dir=station_dir)


def run_item(item, *, study, options, base_seed: int, out_dir: Path, overwrite: bool,
             share_tide_design: bool = False) -> list[dict]:
    """The dask task: one station, or one block of gridded points; returns one outcome per station.

    ``share_tide_design``: the points of a block that share their valid sample times share the tide fit's
    normal matrix (:func:`extremes.tide.harmonic.shared_design`), built once per block.
    """
    kwargs = dict(study=study, options=options, base_seed=base_seed, out_dir=out_dir, overwrite=overwrite)
    worker = _worker_name()
    if isinstance(item, Station):
        return [dict(run_station(item, **kwargs), worker=worker)]
    points = item.stations()
    outcomes: dict[int, dict] = {}
    todo = []
    for k, point in enumerate(points):
        done = None if overwrite else finished_outcome(point, base_seed=base_seed, out_dir=out_dir)
        if done is not None:
            outcomes[k] = done
        else:
            todo.append(k)
    if todo:
        try:
            series = block_series(item, [item.indices[k] for k in todo])
        except Exception as err:  # noqa: BLE001 - the block's points fail together, the run goes on
            for k in todo:
                outcomes[k] = outcome(points[k], status=one_line(err), seed=station_seed(base_seed, points[k].name),
                                      results=None, skipped=False, seconds=0.0)
        else:
            from extremes.tide.harmonic import shared_design

            with shared_design() if share_tide_design else contextlib.nullcontext():
                for k, level in zip(todo, series):
                    outcomes[k] = run_station(dataclasses.replace(points[k], level_m=level), **kwargs)
    return [dict(outcomes[k], worker=worker) for k in range(len(points))]


def _worker_name() -> str:
    """The dask worker running this task (its address), or this process when run outside dask."""
    try:
        from distributed import get_worker

        return str(get_worker().address)
    except (ImportError, ValueError):
        return f"process {os.getpid()}"


def stations_of(item: Station | GriddedBlock) -> list[Station]:
    """The stations of a task."""
    return [item] if isinstance(item, Station) else item.stations()
