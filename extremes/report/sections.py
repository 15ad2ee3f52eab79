"""The sections of the study report, each built from the results document (``results.json``) alone.

One function per stage of the study, in the order of the flow; :func:`appendix_tables` gives the long
tables. Every number goes into a labelled table (columns named with unit suffixes) or a sentence.
"""
from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from extremes.report.html import Section, TableItem

logger = logging.getLogger(__name__)

__all__ = ["assessment_of", "return_levels", "record_section", "tide_section", "msl_section", "surge_section",
           "fits_section", "methods_section", "sea_level_rise_section", "sea_level_rise_table", "appendix_tables"]

#: meaning of each verdict (CONTRACT.md, ``assessment.status``)
VERDICTS = {
    "ok": "OK: every plausibility check passes.",
    "check": "CHECK: a level needs a person's look before use.",
    "unreliable": "UNRELIABLE: the levels must not be used as they stand.",
}
#: periods shown in the body's comparison of methods (every period is in the appendix) [years]
KEY_PERIODS_YEARS = (10.0, 100.0, 1000.0)
#: the level whose chance of exceedance over the design life the sea-level-rise table states [years]
DESIGN_PERIOD_YEARS = 100.0


def assessment_of(document: dict) -> dict:
    """The verdict of a results document: ``{"status", "text", "reasons"}``.

    Results made before the plausibility checks existed have no ``assessment``; their status is
    ``"not assessed"`` and the text says so.
    """
    found = document.get("assessment")
    if not isinstance(found, dict) or found.get("status") not in VERDICTS:
        return {"status": "not assessed", "reasons": (),
                "text": "NOT ASSESSED: these results carry no plausibility verdict (made by a version "
                        "without the checks); review the levels against the record before use."}
    checks = [str(c) for c in found.get("checks") or ()]
    return {"status": found["status"], "text": VERDICTS[found["status"]],
            "reasons": tuple(str(r) for r in found.get("reasons") or ()),
            "checks": f"Checks run: {', '.join(checks)}." if checks else ""}


def return_levels(document: dict, method: str) -> pd.DataFrame:
    """Rows of ``return_levels`` of one method, in period order."""
    frame = pd.DataFrame(document.get("return_levels") or [],
                         columns=["method", "return_period_years", "level_m", "lower_m", "upper_m"])
    unbounded = pd.DataFrame(document.get("return_levels") or []).get("upper_unbounded")
    frame = frame.astype({"level_m": float, "lower_m": float, "upper_m": float})
    if unbounded is not None:  # an upper bound the data cannot limit: null in JSON, +inf here ("unbounded")
        frame.loc[unbounded.fillna(False).astype(bool).to_numpy(), "upper_m"] = np.inf
    frame = frame[frame["method"] == method].sort_values("return_period_years")
    return frame.reset_index(drop=True)


def _curve(document: dict, method: str):
    from extremes.curves import ReturnLevelCurve

    data = (document.get("curves") or {}).get(method)
    return None if data is None else ReturnLevelCurve.from_dict(data)


# ------------------------------------------------------------------------------------------------------
def _when(text) -> str:
    """An ISO 8601 time as ``YYYY-MM-DD HH:MM`` (UTC); other text as it is."""
    try:
        return pd.Timestamp(text).tz_convert("UTC").strftime("%Y-%m-%d %H:%M") if text else "–"
    except (ValueError, TypeError):
        return str(text)


def _times(frame: pd.DataFrame) -> pd.DataFrame:
    """Columns of ISO 8601 times (``start``, ``end``, ``time``) as UTC timestamps, shown to the minute."""
    frame = frame.copy()
    for column in ("start", "end", "time"):
        if column in frame:
            frame[column] = pd.to_datetime(frame[column], utc=True, errors="coerce").astype(object).where(
                lambda c: c.notna(), None)
    return frame


def record_section(document: dict, figures: tuple) -> Section:
    """The record, its sampling and its faults."""
    rec = document.get("record") or {}
    if rec.get("n_samples") is None:
        return Section(title="The record and its quality",
                       paragraphs=("These results hold no description of the record (key 'record').",), figures=figures)
    flags = {k: v for k, v in (rec.get("flags") or {}).items() if k != "gap_hours"}
    flag_rows = [("ok (used)", rec.get("n_ok"))] if rec.get("n_ok") is not None else []
    flag_rows += [(name.replace("_", " "), count) for name, count in flags.items()]
    years = document.get("record_years")
    paragraphs = [
        f"Record {(document.get('inputs') or {}).get('record', '')}: {rec.get('n_samples')} rows from "
        f"{_when(rec.get('start'))} to {_when(rec.get('end'))} (UTC), sampling interval "
        + (f"{rec['interval_minutes']:g} minutes" if isinstance(rec.get("interval_minutes"), (int, float))
           else "unknown")
        + (f", {years:.1f} years of valid data." if isinstance(years, (int, float)) else "."),
        f"Every row has one flag; the counts add up to the rows read. {rec.get('n_flagged')} rows were flagged "
        f"and {rec.get('n_missing')} held no reading; flagged readings are left out of the analysis, not deleted. "
        f"Gaps longer than the sampling interval total {(rec.get('flags') or {}).get('gap_hours') or 0:.0f} hours"
        + (f" in {rec['n_gaps']} gaps." if rec.get("n_gaps") is not None else "."),
        "The completeness of each year is in the appendix.",
    ]
    tables = [TableItem(pd.DataFrame(flag_rows, columns=["flag", "rows"]), "Rows by quality flag.")]
    if rec.get("sampling"):
        eras = pd.DataFrame(rec["sampling"]).rename(columns={"n_stamps": "readings"})
        eras = eras[[c for c in ("start", "end", "interval_minutes", "readings") if c in eras]]
        tables.append(TableItem(_times(eras), "Eras of constant sampling interval."))
        if len(eras) > 1:
            paragraphs.append("The record has several sampling eras: each is quality-controlled at its own "
                              "interval, and readings are weighted by the time they represent.")
    if rec.get("timing_offsets"):
        tables.append(TableItem(_times(pd.DataFrame(rec["timing_offsets"])),
                                "Clock faults found and not corrected, kept out of the tide and surge "
                                "statistics (offset: how far the stamps run ahead of true time)."))
    if rec.get("corrections"):
        corrections = _times(pd.DataFrame(rec["corrections"]))
        if "end" in corrections:
            corrections["end"] = corrections["end"].where(corrections["end"].notna(), "end of record")
        tables.append(TableItem(corrections,
                                "Known corrections applied before quality control (from --corrections)."))
    if rec.get("datum_shift_candidates"):
        paragraphs.append("Candidate datum steps are step changes in monthly means beyond the year-to-year change "
                          "of mean sea level. Check each against the gauge's levelling history before relying on "
                          "the levels, and give a correction for a real one.")
        shifts = pd.DataFrame(rec["datum_shift_candidates"]).rename(columns={"statistic": "test_statistic"})
        tables.append(TableItem(_times(shifts), "Candidate datum steps (size: the step up at the time)."))
    return Section(title="The record and its quality", paragraphs=tuple(paragraphs), figures=figures,
                   tables=tuple(tables))


def tide_section(document: dict, figures: tuple) -> Section:
    """Harmonic analysis, tidal datums and tide type."""
    tide = document.get("tide") or {}
    constituents = pd.DataFrame(tide.get("constituents") or [])
    datum = document.get("datum")
    paragraphs = [
        f"Least-squares harmonic analysis with nodal corrections of {len(constituents)} constituents (Greenwich "
        f"phase lags, UTC) on the record adjusted to the mean-sea-level epoch"
        + (f"; residual standard deviation {tide['residual_std_m']:.3f} m" if tide.get("residual_std_m") else "")
        + (f". Form factor {tide['form_factor']:.3f}: {tide.get('tide_type')}." if tide.get("form_factor")
           is not None else "."),
        "Tidal datums come from a prediction over a full 18.61-year nodal cycle; the ten largest constituents "
        "are below and every constituent is in the appendix.",
    ]
    tables = []
    if len(constituents):
        top = constituents.sort_values("amplitude_m", ascending=False).head(10)
        tables.append(TableItem(top[[c for c in ("name", "speed_deg_per_hour", "amplitude_m", "phase_deg",
                                                 "amplitude_se_m", "phase_se_deg") if c in top]].reset_index(drop=True),
                                "The ten largest constituents."))
    datums = tide.get("datums_m") or {}
    if datums:
        basis = tide.get("datums_basis") or {}  # what each datum includes (radiational constituents...)
        tables.append(TableItem(pd.DataFrame({"datum_name": list(datums), "level_m": list(datums.values()),
                                              "includes": [basis.get(k, "") for k in datums]}),
                                f"Tidal datums, metres above {datum}, at the epoch."))
    return Section(title="Astronomical tide", paragraphs=tuple(paragraphs), figures=figures, tables=tuple(tables))


def msl_section(document: dict) -> Section:
    """Mean-sea-level trend and the epoch of every level."""
    msl = document.get("mean_sea_level") or {}
    epoch = document.get("epoch_year")
    if msl.get("trend_m_per_year") is not None:
        text = (f"Linear trend of annual mean sea level {1000 * msl['trend_m_per_year']:.2f} mm/year (standard "
                f"error {1000 * (msl.get('trend_se_m_per_year') or float('nan')):.2f} mm/year, inflated for "
                f"autocorrelation). Every level is stated at the epoch {epoch:.2f}, where mean sea level is "
                f"{msl['msl_at_epoch_m']:.3f} m. The annual means are in the appendix.")
    else:
        text = "No mean-sea-level trend could be fitted; levels are at the record's mean sea level."
    return Section(title="Mean sea level and epoch", paragraphs=(text,))


def surge_section(document: dict, figures: tuple) -> Section:
    """Non-tidal residual, skew surge and the tide-surge interaction tests."""
    verdict = (document.get("interaction") or {}).get("verdict")
    paragraphs = ["The non-tidal residual is the observed level minus the predicted tide; the skew surge is the "
                  "highest observed level in a tidal cycle minus the predicted high water of that cycle."]
    if verdict:
        paragraphs.append(f"Tide-surge interaction: {verdict}")
    return Section(title="Surge and skew surge", paragraphs=tuple(paragraphs), figures=figures)


def _parameters(document: dict) -> pd.DataFrame:
    rows = []
    for method, detail in (document.get("methods") or {}).items():
        fit = (detail or {}).get("fit") if isinstance(detail, dict) else None
        if not isinstance(fit, dict):
            continue
        values, errors = fit.get("parameters") or {}, fit.get("standard_errors") or {}
        for name, value in values.items():
            unit = "_m" if name in ("location", "scale") else ""
            rows.append({"method": method, "model": str(fit.get("model", "")).upper(), "parameter": name + unit,
                         "estimate": value, "standard_error": errors.get(name)})
    frame = pd.DataFrame(rows)
    if len(frame):
        frame["parameter"] = frame["parameter"].str.replace("_m", " [m]", regex=False)
    return frame


def fits_section(document: dict, figures: tuple) -> Section:
    """Each method's fit: notes, parameters, diagnostics and the effect of storm clustering."""
    notes = []
    for method, detail in (document.get("methods") or {}).items():
        found = detail.get("notes") if isinstance(detail, dict) else None
        if found:
            notes.append(f"{method}: " + "; ".join(str(n) for n in found) + ".")
    tables = []
    parameters = _parameters(document)
    if len(parameters):
        tables.append(TableItem(parameters, "Fitted parameters with standard errors (shape > 0: heavy tail)."))
    for method, detail in (document.get("methods") or {}).items():
        effect = detail.get("clustering_effect") if isinstance(detail, dict) else None
        if effect:
            tables.append(TableItem(pd.DataFrame(effect),
                                    f"{method}: levels with and without the effect of storm clustering."))
    return Section(title="Extreme-value and joint-probability fits", paragraphs=tuple(notes), figures=figures,
                   tables=tuple(tables))


def _interval_text(level, lower, upper) -> str:
    def fmt(value):
        if value is not None and np.isposinf(value):
            return "unbounded"
        return "–" if value is None or not np.isfinite(value) else f"{value:.3f}"

    return f"{fmt(level)} ({fmt(lower)} to {fmt(upper)})"


def levels_by_method(document: dict, periods=None) -> pd.DataFrame:
    """One row per return period, one column per method: ``level (lower to upper)`` in metres."""
    frame = pd.DataFrame(document.get("return_levels") or [])
    if frame.empty:
        return frame
    if periods is not None:
        frame = frame[frame["return_period_years"].isin(list(periods))]
    if "upper_unbounded" in frame:
        frame.loc[frame["upper_unbounded"].fillna(False).astype(bool), "upper_m"] = np.inf
    frame = frame.assign(text=[_interval_text(*(float("nan") if v is None else v for v in values))
                               for values in frame[["level_m", "lower_m", "upper_m"]].itertuples(index=False)])
    table = frame.pivot(index="return_period_years", columns="method", values="text").reset_index()
    order = ["return_period_years"] + [m for m in (document.get("curves") or {}) if m in table.columns]
    table = table[order]
    table.columns = ["return_period_years"] + [f"{m}_m" for m in order[1:]]
    return table


def methods_section(document: dict, figures: tuple) -> Section:
    """Every method side by side, and why one is recommended."""
    periods = [p for p in KEY_PERIODS_YEARS if p in {r.get("return_period_years")
                                                     for r in document.get("return_levels") or ()}]
    reason = (document.get("recommendation") or {}).get("reason", "")
    table = levels_by_method(document, periods or None)
    return Section(title="Methods side by side",
                   paragraphs=(f"Recommended: {document.get('recommended_method')}. {reason}",
                               "Each cell is the level with its confidence interval in brackets; every period "
                               "is in the appendix."),
                   figures=figures, tables=(TableItem(table, "Return levels of every method [m] with intervals."),))


# ------------------------------------------------------------------------------------------------------
def _matching(items, offset: float):
    for item in items or ():
        rise = item.get("rise_m") if isinstance(item, dict) else None
        if rise is not None and np.allclose(np.asarray(rise, dtype=float), offset):
            return item
    return None


def sea_level_rise_table(document: dict) -> pd.DataFrame:
    """One row per offset: the raised 100-year level, its present return period, the chance that today's
    100-year level is exceeded during the design life, and the design level for the accepted risk.

    Values come from the results document (``sea_level_rise_details.by_offset``); results made before it
    existed give what they hold (``sea_level_rise``, ``encounter``, ``design_levels``) and an offset whose
    encounter probability or design level they lack gets it from the saved curve with
    :mod:`extremes.sealevel` (the functions the study uses).
    """
    details = document.get("sea_level_rise_details") or {}
    life = int(details.get("design_life_years") or 50)
    risk = float(details.get("accepted_risk") or 0.1)
    if details.get("by_offset"):
        return pd.DataFrame([_offset_row(row["offset_m"], row["level_100_m"], row.get("present_return_period_years"),
                                         row["encounter_probability_of_present_100yr_level"],
                                         row.get("design_level_m"), life=life, risk=risk)
                             for row in details["by_offset"]])
    return _offsets_from_rows(document, details, life=life, risk=risk)


def _offset_row(offset, level, present, probability, design_m, *, life: int, risk: float) -> dict:
    return {"offset_m": float(offset), f"{DESIGN_PERIOD_YEARS:g}-year level with the offset_m": level,
            "present return period of that level_years": present,
            f"chance today's {DESIGN_PERIOD_YEARS:g}-year level is exceeded in {life} years_percent":
                None if probability is None else 100 * probability,
            f"design level for {risk:.0%} risk in {life} years_m": design_m}


def _offsets_from_rows(document: dict, details: dict, *, life: int, risk: float) -> pd.DataFrame:
    from extremes import sealevel
    from extremes.errors import DataError

    rows = pd.DataFrame(document.get("sea_level_rise") or [])
    curve = _curve(document, details.get("method") or document.get("recommended_method"))
    if rows.empty or curve is None:
        return pd.DataFrame()
    level_today = float(details.get("level_100_m") or curve.level_at([DESIGN_PERIOD_YEARS])[0])
    out = []
    for offset in sorted(set(rows["offset_m"].astype(float))):
        level = level_today + offset
        present = float(np.ravel(sealevel.present_return_period(curve, [level]))[0]) if offset else DESIGN_PERIOD_YEARS
        encounter = _matching(details.get("encounter"), offset)
        probability = (encounter or {}).get("probability")
        if probability is None:
            probability = sealevel.encounter_probability_with_rise(curve, level_m=level_today,
                                                                   design_life_years=life, rise_m=offset).probability
        design = _matching(details.get("design_levels"), offset)
        design_m = (design or {}).get("level_m")
        if design is None:
            try:
                design_m = sealevel.design_level(curve, accepted_probability=risk, design_life_years=life,
                                                 rise_m=offset).level_m
            except DataError as err:
                logger.info("design level for offset %g m not available: %s", offset, err)
        out.append(_offset_row(offset, level, present, probability, design_m, life=life, risk=risk))
    return pd.DataFrame(out)


def sea_level_rise_section(document: dict, figures: tuple) -> Section:
    """Sea-level rise: one table of offsets, the allowance and scenarios where given."""
    details = document.get("sea_level_rise_details") or {}
    life = details.get("design_life_years")
    risk = details.get("accepted_risk")
    paragraphs = [
        f"Levels of the {details.get('method') or document.get('recommended_method')} method raised by each "
        "sea-level-rise offset (offset rule: storm-tide statistics relative to mean sea level unchanged). The "
        "present return period says how often today's climate reaches the raised level."
        + (f" Design life {life} years; accepted chance of at least one exceedance {risk:.0%}; the design level "
           "is the level with that chance over the design life with the offset in place." if life and risk else ""),
        "Every offset at every return period is in the appendix.",
    ]
    allowance = details.get("allowance")
    if isinstance(allowance, dict) and isinstance(allowance.get("allowance"), dict):
        a = {k: (v if isinstance(v, (int, float)) else float("nan")) for k, v in allowance["allowance"].items()}
        paragraphs.append(f"Allowance for the uncertain rise over the design life (Hunter 2012): "
                          f"{a.get('allowance_m', np.nan):.3f} m (mean rise {a.get('mean_rise_m', np.nan):.3f} m, "
                          f"standard deviation {a.get('sd_rise_m', np.nan):.3f} m); assumption: "
                          f"{allowance.get('assumption', '')}.")
        on_curve = allowance.get("on_curve")
        if isinstance(on_curve, dict) and isinstance(on_curve.get("allowance_m"), (int, float)):
            paragraphs.append(f"Allowance solved on the fitted curve itself (used): {on_curve['allowance_m']:.3f} m; "
                              "the closed form above uses the curve's local Gumbel slope and errs for heavy or "
                              "bounded tails.")
    tables = [TableItem(sea_level_rise_table(document), "Sea-level-rise offsets on the recommended levels.")]
    scenarios = [s for s in details.get("scenarios") or () if isinstance(s, dict)]
    if scenarios:
        tables.append(TableItem(pd.DataFrame([{
            "scenario": s.get("scenario"), "rise by the end of the life_m": s.get("rise_end_of_life_m"),
            "chance today's 100-year level is exceeded_percent":
                100 * ((s.get("encounter_100yr_level") or {}).get("probability") or float("nan")),
            "design level_m": (s.get("design_level") or {}).get("level_m")} for s in scenarios]),
            "Sea-level-rise scenarios over the design life."))
    return Section(title="Sea-level rise", paragraphs=tuple(paragraphs), figures=figures, tables=tuple(tables))


# ------------------------------------------------------------------------------------------------------
def appendix_tables(document: dict, *, fold) -> list[tuple]:
    """The long tables: ``(title, paragraphs, frame, caption)`` each; ``fold(frame, max_rows=)`` lays
    long narrow tables out side by side."""
    out = []
    completeness = (document.get("record") or {}).get("completeness_by_year") or {}
    if completeness:
        frame = pd.DataFrame({"year": [int(y) for y in completeness],
                              "complete_percent": [100 * float(v) for v in completeness.values()]})
        out.append(("Completeness by year", (), fold(frame, max_rows=12),
                    "Share of each year's expected samples present."))
    annual = (document.get("mean_sea_level") or {}).get("annual_means")
    if annual:
        frame = pd.DataFrame(annual)
        year = frame["mean_time_year"].astype(float).round(1) if "mean_time_year" in frame else frame.index
        frame = pd.DataFrame({"year": year, "mean_m": frame.get("mean_m"),
                              "complete_percent": 100 * frame.get("completeness", np.nan)})
        out.append(("Annual mean sea level", ("Years below 75% complete are not used for the trend.",),
                    fold(frame, max_rows=12), "Annual mean sea level (mid-year time)."))
    table = levels_by_method(document)
    if len(table):
        out.append(("Return levels of every method", ("Level with the confidence interval in brackets.",),
                    table, "Every method at every return period [m]."))
    rows = pd.DataFrame(document.get("sea_level_rise") or [])
    if len(rows):
        wide = rows.pivot(index="return_period_years", columns="offset_m", values="level_m").reset_index()
        wide.columns = ["return_period_years"] + [f"level with +{o:g} m_m" for o in wide.columns[1:]]
        out.append(("Sea-level rise at every return period", (), wide,
                    "Recommended levels raised by each offset [m]."))
    constituents = pd.DataFrame((document.get("tide") or {}).get("constituents") or [])
    if len(constituents):
        columns = [c for c in ("name", "speed_deg_per_hour", "amplitude_m", "phase_deg", "amplitude_se_m",
                               "phase_se_deg") if c in constituents]
        out.append(("Every tidal constituent", (), constituents[columns],
                    "Harmonic constants (Greenwich phase lags, UTC) in order of speed."))
    return out
