"""Rerun a study's sea-level-rise stage from its saved return-level curves, without refitting.

Engineers rerun design levels whenever sea-level-rise guidance changes. Every method's return-level curve
is saved in the results (``results.json`` key ``curves`` and ``models/curves.json``), so new offsets only
shift a saved curve and read it back: no record is read and nothing is refitted.
"""
from __future__ import annotations

import datetime as _dt
import logging
from pathlib import Path

from extremes import __version__
from extremes.errors import DataError
from extremes.jsonable import dumps, to_jsonable
from extremes.outputs import output_folder

logger = logging.getLogger(__name__)

__all__ = ["rerun_sea_level_rise"]


def rerun_sea_level_rise(results_dir, *, slr_m, periods_years=None, method: str | None = None,
                         out_dir=None, overwrite: bool = False) -> dict:
    """New sea-level-rise offsets on the saved curves of the study in ``results_dir``.

    Parameters
    ----------
    results_dir : path-like
        A results folder written by ``extremes run`` (holding ``results.json``).
    slr_m : sequence of float
        Sea-level-rise offsets. [m]
    periods_years : sequence of float, optional
        Return periods [years]; default the study's.
    method : str, optional
        Method whose curve is raised; default the study's recommended method.
    out_dir : path-like, optional
        Write a results folder (``results.json``, ``tables/sea_level_rise.csv``, ``models/curves.json``)
        with the new offsets; never over existing results unless ``overwrite``.

    Returns
    -------
    dict
        The updated results document (the study's, with ``sea_level_rise`` and its details replaced and
        the rerun recorded under ``reruns``).

    Notes
    -----
    Offset rule (Hunter 2012): with storm-tide statistics unchanged relative to mean sea level, a future
    return level is the present level plus the rise [1]_.

    References
    ----------
    .. [1] J. Hunter, "A simple technique for estimating an allowance for uncertain sea-level rise,"
       *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
    """
    import pandas as pd

    from extremes import sealevel
    from extremes.results import curves_from_results, load_results

    document = load_results(results_dir)
    curves = curves_from_results(document)
    chosen = method or document.get("recommended_method")
    if chosen not in curves:
        raise DataError(f"method {chosen!r} has no saved curve in {results_dir}; available: {sorted(curves)}")
    curve = curves[chosen]
    study = document.get("inputs", {}).get("options", {}).get("study", {})
    periods = list(periods_years) if periods_years is not None else study.get("periods_years") or [
        1, 2, 5, 10, 20, 50, 100, 200, 500, 1000]
    offsets = sealevel.parse_offsets(slr_m)
    rows = sealevel.sea_level_rise_rows(curve, offsets_m=offsets, periods_years=periods)
    amplification = [sealevel.amplification_from_curve(curve, rise_m=o, period_years=100.0)
                     for o in offsets if o > 0]
    document = dict(document)
    document["sea_level_rise"] = to_jsonable(rows)
    details = dict(document.get("sea_level_rise_details", {}))
    details.update({"method": chosen, "amplification": to_jsonable(amplification),
                    "level_100_m": float(curve.level_at([100.0])[0])})
    document["sea_level_rise_details"] = details
    reruns = list(document.get("reruns", []))
    reruns.append({"from": str(results_dir), "slr_m": list(offsets), "periods_years": periods,
                   "method": chosen, "software": {"name": "extremes", "version": __version__},
                   "at": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")})
    document["reruns"] = reruns
    if out_dir is not None:
        with output_folder(Path(out_dir), overwrite=overwrite) as work:
            (work / "tables").mkdir()
            (work / "models").mkdir()
            pd.DataFrame(rows).to_csv(work / "tables" / "sea_level_rise.csv", index=False, float_format="%.6g")
            (work / "models" / "curves.json").write_text(dumps(document["curves"]), encoding="utf-8")
            (work / "results.json").write_text(dumps(document), encoding="utf-8")
    return document
