"""Assemble the report of a study: its sections, figures and tables, as one HTML page.

The page follows the study's stages so that a reviewing engineer can follow it end to end: the
recommended levels first (datum, epoch, method and reason), then the record and its faults, the tide,
mean sea level, the surge, each method's fit, the methods side by side, sea-level rise, the assumptions
and cautions, and the provenance needed to reproduce every number.
"""
from __future__ import annotations

import functools
import logging
import multiprocessing
import os
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pandas as pd

logger = logging.getLogger(__name__)

__all__ = ["build_study_report"]

#: the figure jobs of the report being drawn (read by forked workers, which inherit them)
_JOBS: list = []


@dataclass
class _SectionSpec:
    """A section whose figures are still names of figure jobs."""

    title: str
    paragraphs: tuple = ()
    figures: tuple = ()
    tables: tuple = ()


def _draw(index: int) -> bytes | None:
    """Build and draw figure job ``index`` of :data:`_JOBS` as PNG bytes (None if it fails)."""
    from extremes.report import figures

    name, build, _ = _JOBS[index]
    try:
        return figures.to_png(build())
    except Exception as err:  # noqa: BLE001 - a figure must never sink the report; the log says why
        logger.warning("figure %s not drawn: %s", name, err)
        return None


def _draw_all(jobs) -> dict[str, bytes]:
    """Draw every figure job; on two or more cores in forked worker processes, else one by one."""
    global _JOBS
    _JOBS = list(jobs)
    try:
        workers = min(len(_JOBS), os.cpu_count() or 1, 2)
        drawn = None
        # daemonic processes (e.g. dask workers) may not have children: they draw one by one
        if (workers > 1 and "fork" in multiprocessing.get_all_start_methods()
                and not multiprocessing.current_process().daemon):
            try:
                with multiprocessing.get_context("fork").Pool(workers) as pool:
                    drawn = pool.map(_draw, range(len(_JOBS)), chunksize=1)
            except (OSError, AssertionError, RuntimeError) as err:
                logger.info("figures drawn one by one (no worker processes: %s)", err)
        if drawn is None:
            drawn = [_draw(i) for i in range(len(_JOBS))]
    finally:
        names = [name for name, _, _ in _JOBS]
        _JOBS = []
    return {name: png for name, png in zip(names, drawn) if png is not None}


def _fmt_table(frame: pd.DataFrame, digits: int = 3) -> pd.DataFrame:
    out = frame.copy()
    for column in out.columns:
        if pd.api.types.is_float_dtype(out[column]):
            out[column] = out[column].round(digits)
    return out


def build_study_report(result, document: dict) -> tuple[str, dict[str, bytes]]:
    """The HTML report of ``result`` and its figures as PNG bytes by name.

    Parameters
    ----------
    result : extremes.results.StudyResult
    document : dict
        ``result.to_dict()`` (computed once by the caller).
    """
    from extremes.report import figures
    from extremes.report.html import FigureItem, Summary, TableItem, render_report
    from extremes.report.html import Section as RealSection

    jobs: list[tuple[str, Callable, str]] = []

    def figure(name: str, build: Callable, caption: str) -> str:
        """Register a figure: ``build()`` makes it; it is drawn later, in parallel where possible."""
        jobs.append((name, build, caption))
        return name

    Section = _SectionSpec  # noqa: N806 - sections hold figure names until the figures are drawn

    datum, epoch = result.datum, result.epoch_year
    recommended = result.recommended_method
    periods = result.options["study"]["periods_years"]
    curve = result.curves[recommended]
    levels = _fmt_table(curve.table(periods)[["return_period_years", "level_m", "lower_m", "upper_m"]])
    summary = Summary(
        datum=datum, epoch_year=epoch, recommended_method=recommended, levels=levels,
        paragraphs=(
            "Verdict: " + document["assessment"]["status"].upper() + (
                " - " + " ".join(document["assessment"]["reasons"]) if document["assessment"]["reasons"]
                else " - every plausibility check passed."),
            f"Why this method: {result.comparison.reason}",
            f"Return periods are {'1/AEP' if curve.period_definition == '1/AEP' else 'average recurrence intervals (1/rate; AEP = 1 - exp(-1/T))'}; "
            f"intervals are {100 * curve.confidence:.0f}% ({curve.interval_method or 'see method'}).",
        ),
    )
    sections = []

    # record and quality ------------------------------------------------------------------------------
    qc = result.quality
    rec = document["record"]
    flag_table = pd.DataFrame({"flag": list(qc.counts), "rows": list(qc.counts.values())})
    gaps = qc.gaps.copy()
    record_paragraphs = [
        f"Record {result.source}: {rec['n_samples']} rows from {rec['start']} to {rec['end']} (UTC), sampling "
        f"interval {rec['interval_minutes']} minutes, {result.record_years:.1f} years of valid data.",
        f"Every row has one flag; the counts add up to the rows read. {rec['n_flagged']} rows were flagged and "
        f"{rec['n_missing']} held no reading; flagged readings are excluded from the analysis, not deleted. "
        f"Total length of gaps: {rec['flags']['gap_hours'] or 0:.0f} hours in {rec['n_gaps']} gaps.",
    ]
    record_paragraphs.extend(_archive_paragraphs(rec))
    if rec.get("datum_shift_candidates"):
        record_paragraphs.append(
            "Candidate datum steps (step changes in monthly means beyond the year-to-year change of mean sea "
            "level) were found: "
            + "; ".join(f"{c['time']} ({c['size_m']:+.3f} m)" for c in rec["datum_shift_candidates"])
            + ". Check them against the gauge's levelling history before relying on the levels.")
    sections.append(Section(
        title="The record and its quality",
        paragraphs=tuple(record_paragraphs),
        figures=(figure("record", lambda: figures.record_figure(result.record.water_level_m, flags=qc.flags,
                                                                gaps=gaps, datum=datum),
                        "The record with flagged readings marked by flag and gaps shaded."),),
        tables=(TableItem(flag_table, "Rows by quality flag."),
                TableItem(pd.DataFrame({"year": [int(y) for y in qc.completeness_by_year.index],
                                        "completeness": np.round(qc.completeness_by_year.to_numpy(), 3)}),
                          "Completeness of each year (fraction of expected samples present).")),
    ))

    # tide --------------------------------------------------------------------------------------------
    model = result.tide_model
    constituents = pd.DataFrame([c.to_dict() for c in model.constituents])
    constituents = constituents.sort_values("amplitude_m", ascending=False).head(25)
    datums = pd.DataFrame({"datum_name": list(result.datums.datums_m),
                           "level_m": np.round(list(result.datums.datums_m.values()), 3)})
    predicted = model.predict(result.level_epoch_m.index)
    sections.append(Section(
        title="Astronomical tide",
        paragraphs=(
            f"Least-squares harmonic analysis with nodal corrections of {len(model.constituents)} constituents "
            f"(Greenwich phase lags, UTC) on the record adjusted to the mean-sea-level epoch. Residual standard "
            f"deviation {model.residual_std_m:.3f} m. Form factor {result.form_factor:.3f}: {result.tide_type}.",
            "Tidal datums come from a prediction over a full 18.61-year nodal cycle (HAT, LAT, means of high "
            "and low waters); spring and neap levels follow Z0 +/- (M2 +/- S2).",
        ),
        figures=(figure("tide_fit", lambda: figures.tide_fit_figure(result.level_epoch_m, predicted, datum=datum),
                        "Observed and predicted levels over a sample fortnight, and the residual spectrum."),),
        tables=(TableItem(_fmt_table(constituents[["name", "speed_deg_per_hour", "amplitude_m", "phase_deg",
                                                   "amplitude_se_m", "phase_se_deg", "amplitude_to_se"]], 4),
                          "The 25 largest constituents."),
                TableItem(datums, f"Tidal datums [m above {datum}] at the epoch.")),
    ))

    # mean sea level ----------------------------------------------------------------------------------
    msl = document["mean_sea_level"]
    if msl["trend_m_per_year"] is not None:
        msl_text = (f"Linear trend of annual mean sea level {1000 * msl['trend_m_per_year']:.2f} +/- "
                    f"{1000 * msl['trend_se_m_per_year']:.2f} mm/year (standard error inflated for "
                    f"autocorrelation). Every level is stated at the epoch {epoch:.2f}, where mean sea level is "
                    f"{msl['msl_at_epoch_m']:.3f} m.")
    else:
        msl_text = "No mean-sea-level trend could be fitted; levels are at the record's mean sea level."
    sections.append(Section(title="Mean sea level and epoch", paragraphs=(msl_text,),
                            tables=(TableItem(_fmt_table(result.annual_msl.reset_index()
                                                         if result.annual_msl.index.name else result.annual_msl),
                                              "Annual mean sea level."),)))

    # surge -------------------------------------------------------------------------------------------
    skew = result.skew_surges
    skew_series = pd.Series(skew["skew_surge_m"].to_numpy(), index=pd.DatetimeIndex(skew["time"]))
    sections.append(Section(
        title="Surge and skew surge",
        paragraphs=(
            "The non-tidal residual is the observed level minus the predicted tide; the skew surge is the "
            "highest observed level in a tidal cycle minus the predicted high water of that cycle.",
            f"Tide-surge interaction: {result.interaction.verdict}",
        ),
        figures=(figure("residual", lambda: figures.residual_figure(result.residual_m, skew_surge_m=skew_series),
                        "Non-tidal residual and skew surges."),),
    ))

    # each method's fit -------------------------------------------------------------------------------
    fit_figures = []
    for method in ("annual-maxima", "peaks-over-threshold", "r-largest"):
        detail = result.method_details.get(method)
        sample = getattr(detail, "sample", None)
        if detail is None or sample is None:
            continue
        values = sample.to_numpy() if hasattr(sample, "to_numpy") else np.asarray(sample)
        values = values[:, 0] if values.ndim == 2 else values
        fit_figures.append(figure(
            f"fit_{method}",
            functools.partial(figures.fit_diagnostics_figure, values[np.isfinite(values)], result.curves[method],
                              cdf=getattr(detail, "cdf", None), quantile=getattr(detail, "quantile", None),
                              record_years=result.record_years, title=method),
            f"Diagnostics of the {method} fit: QQ, PP and return-level plot with observed points."))
    joint_tables = []
    for method in ("skew-surge-joint-probability", "joint-probability"):
        detail = result.method_details.get(method)
        if detail is not None and getattr(detail, "clustering_effect", None) is not None:
            joint_tables.append(TableItem(_fmt_table(detail.clustering_effect),
                                          f"{method}: effect of storm clustering (extremal index by level)."))
    notes = [f"{name}: " + "; ".join(getattr(d, "notes", ()) or ()) for name, d in result.method_details.items()
             if getattr(d, "notes", None)]
    sections.append(Section(title="Extreme-value and joint-probability fits",
                            paragraphs=tuple(notes) or ("",), figures=tuple(fit_figures),
                            tables=tuple(joint_tables)))

    # methods compared --------------------------------------------------------------------------------
    table = _fmt_table(result.comparison.table)
    am = result.method_details.get("annual-maxima")
    observed = getattr(am, "sample", None)
    def comparison_figure():
        fig = figures.methods_comparison_figure(
            result.curves, recommended=recommended,
            observed_m=None if observed is None else np.asarray(observed, dtype=float),
            record_years=result.record_years, periods_range=(1.0, 1000.0))
        estimates = np.array([c.level_at([1.5, 1000.0]) for c in result.curves.values()])
        low, high = np.nanmin(estimates[:, 0]), np.nanmax(estimates[:, 1])
        if np.isfinite(low) and np.isfinite(high) and high > low:
            # the axis follows the estimates; wide upper bounds run off the top rather than flatten the curves
            fig.axes[0].set_ylim(low - 0.1 * (high - low), high + 0.6 * (high - low))
        return fig

    sections.append(Section(
        title="Methods side by side",
        paragraphs=(result.comparison.reason,),
        figures=(figure("methods", comparison_figure,
                        "Return levels of every method with their intervals (bands run off the top where the "
                        "upper bound is far above the estimate; the tables give every bound)."),),
        tables=(TableItem(table, "Return levels of every method [m] with intervals."),),
    ))

    # sea-level rise ----------------------------------------------------------------------------------
    slr = result.sea_level_rise
    slr_rows = pd.DataFrame(slr["rows"])
    paragraphs = [
        f"Levels of the recommended method raised by each sea-level-rise offset, with the present return "
        f"period of each raised level (how often today's climate would reach it). Design life "
        f"{slr['design_life_years']} years; accepted probability of exceedance {slr['accepted_risk']:.0%}.",
    ]
    for enc in slr["encounter"]:
        paragraphs.append(str(getattr(enc, "summary", None) or enc))
    for design in slr["design_levels"]:
        paragraphs.append(str(getattr(design, "summary", None) or design))
    slr_figures = []
    years = np.arange(0, slr["design_life_years"] + 1) + epoch
    rises = {f"+{o:g} m by end of life": np.linspace(0, o, years.size) for o in result.options["study"]["slr_m"]
             if o > 0}
    for item in slr["scenario_results"]:
        paragraphs.append(f"Scenario {item['scenario']}: rise {item['rise_end_of_life_m']:.2f} m by the end of "
                          f"the design life; {getattr(item['encounter_100yr_level'], 'summary', '')} "
                          f"{getattr(item['design_level'], 'summary', '')}")
    if slr.get("allowance"):
        allowance = slr["allowance"]["allowance"]
        paragraphs.append(
            f"Allowance for the uncertain rise over the design life (Hunter 2012): {allowance.allowance_m:.3f} m "
            f"(mean rise {allowance.mean_rise_m:.3f} m, standard deviation {allowance.sd_rise_m:.3f} m, Gumbel "
            f"scale {allowance.scale_m:.3f} m); assumption: {slr['allowance']['assumption']}.")
    if slr["scenario_results"]:
        scenarios = slr["scenarios"]
        rises.update({name: np.asarray(scenarios.rise_since(name, years, reference_year=epoch), dtype=float)
                      for name in scenarios.names})
    if rises:
        slr_figures.append(figure("sea_level_rise", lambda: figures.sea_level_rise_figure(curve, years=years,
                                                                                          rise_m=rises),
                                  "Return levels against time under rising sea level."))
    sections.append(Section(title="Sea-level rise", paragraphs=tuple(paragraphs), figures=tuple(slr_figures),
                            tables=(TableItem(_fmt_table(slr_rows), "Recommended levels under each offset."),)))

    provenance = {
        "software": f"extremes {result.software['version']}",
        "record": result.source,
        "sha256": result.sha256,
        "datum": datum,
        "epoch_year": f"{epoch:.2f}",
        "options": document["inputs"]["options"],
        "warnings": "; ".join(result.warnings) or "none",
        "notes": "; ".join(result.notes) or "none",
    }
    pngs = _draw_all(jobs)
    captions = {name: caption for name, _, caption in jobs}
    sections = [RealSection(title=spec.title, paragraphs=spec.paragraphs, tables=spec.tables,
                            figures=tuple(FigureItem(png=pngs[n], caption=captions[n], alt=captions[n])
                                          for n in spec.figures if n in pngs))
                for spec in sections]
    html = render_report(title=f"Design still-water levels: {result.source.split('/')[-1]}", summary=summary,
                         sections=sections, cautions=result.cautions, provenance=provenance)
    return html, pngs


def _archive_paragraphs(rec: dict) -> list[str]:
    """Sampling eras, corrections applied and clock faults of the record object, in words."""
    out = []
    if len(rec.get("sampling", [])) > 1:
        out.append("Sampling eras (each quality-controlled at its own interval; readings weighted by the time they "
                   "represent): " + "; ".join(f"{e['start'][:10]} to {e['end'][:10]} every {e['interval_minutes']:g} "
                                              f"min" for e in rec["sampling"]) + ".")
    if rec.get("corrections"):
        out.append("Known corrections applied before quality control: " + "; ".join(
            f"{c['start']} to {c['end'] or 'the end'}: {c['add_m']:+g} m, {c['shift_minutes']:+g} min "
            f"({c.get('rows', 0)} rows)" for c in rec["corrections"]) + ".")
    if rec.get("timing_offsets"):
        out.append("Clock faults found and not corrected, kept out of the tide and surge statistics: " + "; ".join(
            f"{o['start']} to {o['end']} (stamps {o['offset_minutes']:+.0f} min ahead of true time)"
            for o in rec["timing_offsets"]) + ".")
    return out
