"""Many records or model points: one study per station on dask.distributed, and the view along the coast.

:func:`run_batch` maps a per-station study over stations, one dask task per station file (or per block of
points of a gridded model output), on a :class:`distributed.LocalCluster` by default or on any running
dask.distributed scheduler. Each station's results go to ``out_dir/<station>/`` (written atomically by the
study); the summary of all stations to ``out_dir/summary.csv`` and ``out_dir/summary.nc``, and the batch's
own report to ``out_dir/summary.html`` (figures also in ``out_dir/summary_figures/``).

The package, by what each module does:

- :mod:`~extremes.batch.inputs`: :class:`Station`, :class:`GriddedBlock`, record files, glob patterns and
  manifests (:func:`stations_from_paths`, :func:`read_manifest`);
- :mod:`~extremes.batch.gridded`: gridded model output read lazily, split into blocks (:func:`gridded_blocks`);
- :mod:`~extremes.batch.tasks`: what one task does (seeds, resume, the full study and the model-point mode);
- :mod:`~extremes.batch.run`: :class:`BatchSettings`, the dask cluster and :func:`run_batch`;
- :mod:`~extremes.batch.summary`: :class:`BatchSummary`, ``summary.csv`` and ``summary.nc``;
- :mod:`~extremes.batch.coast`: order along the coast and the neighbour consistency check;
- :mod:`~extremes.batch.page`: ``summary.html`` and its figures.

Robustness:

- A station whose study fails gets its error (one line) in the summary's ``status`` and NaN levels; the run
  goes on.
- A station folder that already holds a complete ``results.json`` is not studied again (unless
  ``overwrite``); its numbers are read back into the summary. A rerun therefore resumes an interrupted
  batch. The summaries and the page are rewritten on every run (they describe every station).
- Each station's random seed is derived from the base seed and the station name (:func:`station_seed`), so
  the numbers do not depend on the order of the tasks, the number of workers or the machines.
"""
from extremes.batch.gridded import block_series, gridded_blocks, open_gridded
from extremes.batch.inputs import (
    MANIFEST_COLUMNS,
    GriddedBlock,
    Station,
    expand_records,
    read_manifest,
    station_name,
    stations_from_paths,
)
from extremes.batch.run import BatchSettings, dask_client, run_batch
from extremes.batch.summary import HEADLINE_PERIOD_YEARS, BatchSummary, write_summaries
from extremes.batch.tasks import (
    POINT_TOLERANCE_M,
    completed_results,
    run_item,
    station_seed,
    study_point,
    study_station,
)
from extremes.constants import DEFAULT_SEED

__all__ = ["Station", "GriddedBlock", "BatchSummary", "BatchSettings", "run_batch", "study_station",
           "study_point", "station_seed", "station_name", "expand_records", "stations_from_paths",
           "read_manifest", "open_gridded", "gridded_blocks", "block_series", "completed_results",
           "write_summaries", "dask_client", "run_item", "DEFAULT_SEED", "MANIFEST_COLUMNS",
           "HEADLINE_PERIOD_YEARS", "POINT_TOLERANCE_M"]
