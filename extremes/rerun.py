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


def _recomputed(document: dict, curves: dict, *, chosen: str, offsets, periods, study: dict) -> dict:
    """The parts of a results document that depend on the offsets and periods, recomputed."""
    import pandas as pd

    from extremes.report.cautions import standard_cautions
    from extremes.sealevel import assess_sea_level_rise

    slr = assess_sea_level_rise(curves[chosen], offsets_m=offsets, periods_years=periods,
                                design_life_years=study.get("design_life_years", 50.0),
                                accepted_risk=study.get("accepted_risk", 0.1),
                                scenarios=study.get("slr_scenarios"), epoch_year=document.get("epoch_year"))
    record = document.get("record", {})
    cautions = standard_cautions(
        datum=document.get("datum", "unspecified"), epoch_year=document.get("epoch_year"),
        record_years=document.get("record_years"), interval_minutes=record.get("interval_minutes"),
        methods=tuple(curves), recommended_method=document.get("recommended_method"), slr_offsets_m=offsets)
    table = pd.concat([curve.rows(periods) for curve in curves.values()], ignore_index=True)
    return {"return_levels": table, **slr.to_dict(), "cautions": cautions}, slr


def rerun_sea_level_rise(results_dir, *, slr_m, periods_years=None, method: str | None = None,
                         out_dir=None, overwrite: bool = False) -> dict:
    """New sea-level-rise offsets on the saved curves of the study in ``results_dir``.

    Everything the study derives from the offsets (and the periods) is recomputed by the same stage
    function the study uses (:func:`extremes.sealevel.stage.assess_sea_level_rise`): the raised levels,
    their present return periods, amplification, encounter probabilities and design levels for each offset,
    scenario results and allowance, the return-level table at the periods and the cautions. The options
    recorded in the results say the new offsets and periods, so the document equals that of a fresh study
    with them (apart from timings and the ``reruns`` record).

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
        Write a results folder with the new offsets (``results.json``, every table, ``models/``, and when
        the study has a report, the report in HTML and PDF with its figures, the sea-level-rise figure
        redrawn); never over existing results unless ``overwrite``.

    Returns
    -------
    dict
        The updated results document, with the rerun recorded under ``reruns``.

    Notes
    -----
    Offset rule (Hunter 2012): with storm-tide statistics unchanged relative to mean sea level, a future
    return level is the present level plus the rise [1]_.

    References
    ----------
    .. [1] J. Hunter, "A simple technique for estimating an allowance for uncertain sea-level rise,"
       *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
    """
    from extremes import sealevel
    from extremes.constants import DEFAULT_PERIODS_YEARS
    from extremes.results import curves_from_results, load_results

    document = load_results(results_dir)
    curves = curves_from_results(document)
    chosen = method or document.get("recommended_method")
    if chosen not in curves:
        raise DataError(f"method {chosen!r} has no saved curve in {results_dir}; available: {sorted(curves)}")
    options = dict(document.get("inputs", {}).get("options", {}))
    study = dict(options.get("study", {}))
    periods = sorted({float(p) for p in (periods_years if periods_years is not None
                                         else study.get("periods_years") or DEFAULT_PERIODS_YEARS)})
    offsets = sealevel.parse_offsets(slr_m)
    updated, slr = _recomputed(document, curves, chosen=chosen, offsets=offsets, periods=periods, study=study)
    study.update(slr_m=list(offsets), periods_years=periods)
    options["study"] = study
    document = dict(document)
    document["inputs"] = {**document.get("inputs", {}), "options": options}
    document.update(to_jsonable(updated))
    reruns = list(document.get("reruns", []))
    reruns.append({"from": str(results_dir), "slr_m": list(offsets), "periods_years": periods,
                   "method": chosen, "software": {"name": "extremes", "version": __version__},
                   "at": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")})
    document["reruns"] = reruns
    if out_dir is not None:
        _write_rerun(Path(results_dir), Path(out_dir), document, slr, overwrite=overwrite)
    return document


def _write_rerun(source: Path, out_dir: Path, document: dict, slr, *, overwrite: bool) -> None:
    """The rerun's results folder: the study's tables and models, the recomputed ones replaced."""
    import shutil

    import pandas as pd

    from extremes.results import csv_text

    with output_folder(out_dir, overwrite=overwrite) as work:
        for sub in ("tables", "models"):
            if (source / sub).is_dir():
                shutil.copytree(source / sub, work / sub)
            else:
                (work / sub).mkdir()
        tables = {"return_levels": pd.DataFrame(document["return_levels"]),
                  "sea_level_rise": pd.DataFrame(slr.rows), "sea_level_rise_by_offset": pd.DataFrame(slr.by_offset)}
        for stem, frame in tables.items():
            (work / "tables" / f"{stem}.csv").write_text(csv_text(frame), encoding="utf-8")
        (work / "models" / "curves.json").write_text(dumps(document["curves"]), encoding="utf-8")
        (work / "results.json").write_text(dumps(document), encoding="utf-8")
        if (source / "report.html").is_file():  # the report and sea-level-rise figure for the new offsets
            from extremes.report.assemble import refresh_report

            refresh_report(document, source).write(work)
