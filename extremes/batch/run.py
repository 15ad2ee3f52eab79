"""Running a batch on dask.distributed: the settings, the cluster and :func:`run_batch`."""
from __future__ import annotations

import contextlib
import functools
import logging
import os
import time
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from extremes.batch.inputs import GriddedBlock, Station, check_unique_names
from extremes.batch.summary import BatchSummary, write_summaries
from extremes.batch.tasks import (
    finished_outcome,
    one_line,
    outcome,
    run_item,
    station_seed,
    stations_of,
    study_point,
    study_station,
)
from extremes.constants import DEFAULT_SEED
from extremes.errors import DataError, ExtremesWarning, OutputError

logger = logging.getLogger(__name__)

__all__ = ["BatchSettings", "dask_client", "run_batch"]

#: dask's setting that starts workers with ``MALLOC_TRIM_THRESHOLD_=65536``; fixing that threshold also fixes
#: glibc's mmap threshold at 128 KiB (mallopt(3)), so every array of a study's size is mapped afresh and
#: page-faulted on each use: a model point then costs about a third more CPU, half of it in the kernel
#: (benchmarks/bench_batch.py). Local workers are started without it (glibc's adaptive thresholds).
_TRIM_KEY = "distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_"


@dataclass(frozen=True)
class BatchSettings:
    """How a batch runs (everything but the stations and the study options).

    Attributes
    ----------
    mode : {"full", "points"}
        ``"full"``: the whole study per station (:func:`~extremes.batch.tasks.study_station`);
        ``"points"``: the model-point mode (:func:`~extremes.batch.tasks.study_point`: no hourly check
        method, no figures or per-point report; points of a gridded block share the tide fit's normal
        matrix), same recommended levels within :data:`~extremes.batch.tasks.POINT_TOLERANCE_M`.
    figures : bool
        Full mode: draw each station's figures and HTML report.
    summary_page : bool
        Write ``summary.html`` and its figures beside the summary tables.
    scheduler : str or None
        Address of a running dask scheduler (e.g. ``tcp://host:8786``); default a new :class:`LocalCluster`.
        Workers must have this package installed and see the record files at the same paths.
    workers : int or None
        Worker processes of the local cluster (default: the number of CPUs, at most one per task).
    overwrite : bool
        Study every station again, replacing existing station folders. Without it a station folder with a
        complete ``results.json`` is kept and its numbers are read into the summary.
    errors : {"warn", "ignore", "raise"}
        What to do about a failed station besides putting its message in the summary: log and warn
        (:class:`ExtremesWarning`), nothing, or raise :class:`DataError` once the summaries are written.
    """

    mode: Literal["full", "points"] = "full"
    figures: bool = True
    summary_page: bool = True
    scheduler: str | None = None
    workers: int | None = None
    overwrite: bool = False
    errors: Literal["raise", "warn", "ignore"] = "warn"

    def __post_init__(self):
        if self.mode not in ("full", "points"):
            raise DataError(f"batch mode must be 'full' or 'points'; got {self.mode!r}")
        if self.errors not in ("raise", "warn", "ignore"):
            raise DataError(f"errors must be 'raise', 'warn' or 'ignore'; got {self.errors!r}")
        if self.workers is not None and int(self.workers) < 1:
            raise DataError(f"workers must be >= 1; got {self.workers!r}")

    def default_study(self) -> Callable[..., Mapping]:
        """The per-station study of this mode."""
        if self.mode == "points":
            return study_point
        return study_station if self.figures else functools.partial(study_station, figures=False)

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return dict(self.__dict__)


@contextlib.contextmanager
def dask_client(*, scheduler: str | None = None, workers: int | None = None):
    """A :class:`distributed.Client` on ``scheduler`` or on a new quiet :class:`LocalCluster`.

    The local cluster runs ``workers`` processes (default: the number of CPUs) with one thread each; its
    HTTP server (dashboard, health checks) listens on a free loopback port, so that runs side by side do
    not compete for port 8787. Its workers keep the C library's own memory-allocation thresholds
    (:data:`_TRIM_KEY`).
    """
    import dask
    from distributed import Client, LocalCluster

    if scheduler is not None:
        try:
            client = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError) as err:
            raise DataError(f"--scheduler {scheduler}: cannot connect ({' '.join(str(err).split())}); "
                            "expected the address of a running dask scheduler, e.g. tcp://host:8786") from err
        with client:
            yield client
        return
    n_workers = int(workers or os.cpu_count() or 1)
    with dask.config.set({_TRIM_KEY: None}), LocalCluster(
            n_workers=n_workers, threads_per_worker=1, processes=True, dashboard_address="127.0.0.1:0",
            silence_logs=logging.ERROR) as cluster, Client(cluster) as client:
        yield client



def run_batch(stations: Sequence[Station | GriddedBlock], *, out_dir: str | os.PathLike, options=None,
              settings: BatchSettings | None = None, study: Callable[..., Mapping] | None = None, client=None,
              progress: Callable[[int, int, str], None] | None = None) -> BatchSummary:
    """Study every station on dask.distributed and write the summaries.

    Parameters
    ----------
    stations : sequence of Station or GriddedBlock
        The stations (one task each) and blocks of gridded points (one task per block).
    out_dir : path-like
        Results folder: created if missing; each station's results go to ``out_dir/<station>/``.
    options : StudyOptions, optional
        Study options common to every station; each station's seed is :func:`station_seed` of
        ``options.seed`` (default :data:`DEFAULT_SEED`) and its name.
    settings : BatchSettings, optional
        Mode, cluster, overwrite and error handling (defaults of :class:`BatchSettings`).
    study : callable, optional
        The per-station study ``(station, *, options, seed, out_dir, overwrite) -> results mapping``
        (it writes the station folder ending with a complete ``results.json``); default that of the mode.
    client : distributed.Client, optional
        An existing client to use instead of ``settings.scheduler``/``settings.workers``.
    progress : callable, optional
        Called as ``progress(done, total, station)`` after each task.

    Returns
    -------
    BatchSummary
        The outcome of every station, in the order given.

    Raises
    ------
    DataError
        On repeated station names, an unreachable scheduler, or (with ``errors="raise"``) a failed station.
    OutputError
        If ``out_dir`` exists and is not a folder.
    """
    settings = settings or BatchSettings()
    items = list(stations)
    out_dir = _prepare(items, out_dir)
    base_seed = getattr(options, "seed", None)
    base_seed = DEFAULT_SEED if base_seed is None else int(base_seed)
    started = time.perf_counter()
    task = dict(study=study or settings.default_study(), options=options, base_seed=base_seed, out_dir=out_dir,
                overwrite=settings.overwrite, share_tide_design=settings.mode == "points")
    results = [None] * len(items) if settings.overwrite else [_done_before(item, base_seed, out_dir)
                                                              for item in items]
    _run_pending(items, results, task, settings=settings, client=client, progress=progress)
    outcomes = tuple(o for chunk in results for o in chunk)
    periods = getattr(options, "periods_years", None)
    if periods is None:
        periods = sorted({float(r["return_period_years"]) for o in outcomes for r in o["return_levels"]})
    summary = BatchSummary(out_dir=out_dir, outcomes=outcomes, periods_years=tuple(float(p) for p in periods),
                           seconds=time.perf_counter() - started, mode=settings.mode)
    write_summaries(summary)
    if settings.summary_page:
        from extremes.batch.page import write_summary_page

        write_summary_page(summary)
    _report_failures(summary, settings.errors)
    return summary


def _prepare(items: list, out_dir) -> Path:
    """Check the stations and the results folder; the folder's absolute path."""
    if not items:
        raise DataError("run_batch: no stations given")
    check_unique_names([s.name for item in items for s in stations_of(item)], where="batch")
    out_dir = Path(out_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise OutputError(f"{out_dir}: exists and is not a folder")
    return out_dir.resolve()


def _done_before(item, base_seed: int, out_dir: Path) -> list[dict] | None:
    """Outcomes of a task whose stations were all done by an earlier run (it needs no task), else None."""
    found = [finished_outcome(s, base_seed=base_seed, out_dir=out_dir) for s in stations_of(item)]
    return found if all(o is not None for o in found) else None


def _run_pending(items: list, results: list, task: dict, *, settings: BatchSettings, client, progress) -> None:
    """Submit the tasks not done before and fill ``results`` as they complete (a cluster only if needed)."""
    pending = [i for i, r in enumerate(results) if r is None]
    n_workers = settings.workers if settings.workers is not None else min(os.cpu_count() or 1,
                                                                          max(len(pending), 1))
    context = contextlib.nullcontext(client) if client is not None or not pending else dask_client(
        scheduler=settings.scheduler, workers=n_workers)
    done = len(items) - len(pending)
    if progress is not None and done:
        progress(done, len(items), f"{done} done before")
    out_dir = task["out_dir"]
    with context as active:
        from distributed import as_completed

        try:
            out_dir.mkdir(parents=True, exist_ok=True)
        except OSError as err:
            raise OutputError(f"{out_dir}: cannot create the results folder ({err.strerror})") from err
        futures = {active.submit(run_item, items[i], pure=False, key=f"extremes-batch-{i}-{os.urandom(4).hex()}",
                                 **task): i for i in pending}
        for future in (as_completed(futures) if futures else ()):
            i = futures[future]
            try:
                results[i] = future.result()
            except Exception as err:  # noqa: BLE001 - a lost worker or an unpicklable result fails its task only
                results[i] = [outcome(s, status=one_line(err), seed=station_seed(task["base_seed"], s.name),
                                      results=None, skipped=False, seconds=0.0) for s in stations_of(items[i])]
            finally:
                future.release()
            done += 1
            if progress is not None:
                progress(done, len(items), ", ".join(o["station"] for o in results[i]))


def _report_failures(summary: BatchSummary, errors: str) -> None:
    """Log, warn about or raise for the failed stations, as ``errors`` says."""
    outcomes = summary.outcomes
    failed = [o for o in outcomes if o["status"] != "ok"]
    for item in outcomes:
        for message in item["warnings"]:
            logger.debug("station %s: %s", item["station"], message)
    where = summary.out_dir / "summary.csv"
    if failed and errors == "warn":
        for item in failed:
            logger.warning("station %s failed: %s", item["station"], item["status"])
        warnings.warn(f"{len(failed)} of {len(outcomes)} stations failed; see {where}", ExtremesWarning,
                      stacklevel=3)
    if failed and errors == "raise":
        raise DataError(f"station {failed[0]['station']}: {failed[0]['status']} "
                        f"({len(failed)} of {len(outcomes)} stations failed; see {where})")
    logger.info("batch: %d stations, %d ok (%d from earlier runs), %d failed in %.1f s", len(outcomes),
                summary.n_ok, summary.n_skipped, summary.n_failed, summary.seconds)
