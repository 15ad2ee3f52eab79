"""The batch's own report: ``summary.html``, one self-contained page with the view along the coast.

The page shows, for every station in coast order (:mod:`extremes.batch.coast`): the design levels at the
chosen return periods with their intervals; a map of the stations by longitude and latitude coloured by
the 100-year level, with failed and doubtful stations marked (no map tiles, nothing downloaded); a table
of verdict, neighbour check, method, record length, levels and a relative link to each station's own
report; the stations to look at, with reasons; and the batch's cautions. The figures are drawn with
matplotlib (Agg, no pyplot), embedded as base64 PNG and also saved as files in ``summary_figures/``.
The page needs no script and loads nothing from outside.
"""
from __future__ import annotations

import base64
import datetime as _dt
import html
import io
import logging
import math
from urllib.parse import quote

import numpy as np
import pandas as pd

from extremes.batch.summary import HEADLINE_PERIOD_YEARS, BatchSummary
from extremes.outputs import write_bytes_atomic, write_text_atomic

logger = logging.getLogger(__name__)

__all__ = ["write_summary_page", "render_summary_page", "levels_along_coast_figure", "station_map_figure",
           "batch_cautions", "FIGURE_FOLDER", "PAGE_PERIODS_YEARS"]

#: folder of the page's figures, beside ``summary.html``
FIGURE_FOLDER = "summary_figures"
#: return periods drawn along the coast when the batch has them (the table shows every period) [years]
PAGE_PERIODS_YEARS = (10.0, 100.0, 1000.0)
#: stations named on the figures' axes up to this many
_NAMED_MAX = 40
_DOUBTFUL = ("check", "unreliable")

_CSS = """
body{font-family:system-ui,Helvetica,Arial,sans-serif;margin:1.5em auto;max-width:1150px;color:#1b1b1b;
line-height:1.4;padding:0 1em}
h1{font-size:1.6em;margin-bottom:.2em}h2{border-bottom:1px solid #ccc;padding-bottom:.2em;margin-top:1.6em}
figure{margin:1em 0}figure img{max-width:100%;height:auto;border:1px solid #ddd}
figcaption{font-size:.92em;color:#444}
table{border-collapse:collapse;font-size:.86em;margin:.6em 0}
th,td{border:1px solid #ccc;padding:.25em .5em;text-align:right;vertical-align:top}
th{background:#f0f0f0}td.text{text-align:left}
tr.failed td{background:#fbe3e3}tr.doubtful td{background:#fff4d6}
.badge{display:inline-block;padding:0 .4em;border-radius:.3em;font-size:.9em}
.ok{background:#dff0d8}.check{background:#fde8b0}.unreliable,.failed-badge{background:#f5c6c6}
.na{background:#eee}
.caution{background:#fff8e1;border-left:4px solid #e0a800;padding:.6em 1em}
.meta{font-size:.85em;color:#555}
"""


def _png(fig) -> bytes:
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=100, metadata={"Software": None})
    return buffer.getvalue()


def _page_periods(periods) -> list[float]:
    """At most four periods to draw: those of :data:`PAGE_PERIODS_YEARS` present, else spread over the list."""
    periods = [float(p) for p in periods]
    chosen = [p for p in periods if any(np.isclose(p, q) for q in PAGE_PERIODS_YEARS)]
    if chosen:
        return chosen
    if len(periods) <= 4:
        return periods
    return [periods[int(round(k))] for k in np.linspace(0, len(periods) - 1, 4)]


def _doubtful(summary: BatchSummary) -> np.ndarray:
    return np.array([o.get("assessment") in _DOUBTFUL or c.status == "check"
                     for o, c in zip(summary.outcomes, summary.neighbours)])


def levels_along_coast_figure(summary: BatchSummary):
    """Design levels with intervals at the page's periods, stations in coast order (a matplotlib Figure)."""
    from matplotlib.figure import Figure

    frame = summary.to_frame()
    order = np.argsort(np.asarray(summary.order.rank))
    n = len(order)
    x = np.arange(n)
    fig = Figure(figsize=(11.0, 4.8 if n <= _NAMED_MAX else 4.2), layout="constrained")
    ax = fig.add_subplot()
    colours = ("#1f77b4", "#d62728", "#2ca02c", "#9467bd")
    ok = (frame["status"] == "ok").to_numpy()[order]
    doubtful = _doubtful(summary)[order]
    dense = n > 60
    for k, period in enumerate(_page_periods(summary.periods_years)):
        tag = f"{period:g}"
        level = frame[f"level_{tag}_m"].to_numpy(float)[order]
        lower = frame[f"lower_{tag}_m"].to_numpy(float)[order]
        upper = frame[f"upper_{tag}_m"].to_numpy(float)[order]
        colour = colours[k % len(colours)]
        if dense:
            ax.fill_between(x, lower, upper, color=colour, alpha=0.2, linewidth=0)
            ax.plot(x, level, color=colour, lw=1.2, label=f"{tag}-year level and interval")
            ax.plot(x[doubtful & ok], level[doubtful & ok], "o", ms=9, mfc="none", mec="#e07000", mew=1.6,
                    label="doubtful: verdict or neighbour check" if k == 0 else None)
            continue
        open_top = np.isfinite(level) & ~np.isfinite(upper)
        # an interval that does not contain its estimate (a bootstrap can give one) is drawn to the estimate
        below = np.clip(np.where(np.isfinite(lower), level - lower, 0.0), 0.0, None)
        above = np.clip(np.where(np.isfinite(upper), upper - level, 0.0), 0.0, None)
        ax.errorbar(x + (k - 1) * 0.12, level, yerr=[below, above], fmt="o", ms=4.5, color=colour, capsize=2.5,
                    lw=1.0, label=f"{tag}-year level and interval")
        if open_top.any():
            ax.plot(x[open_top] + (k - 1) * 0.12, level[open_top], marker="^", ls="none", color=colour, ms=7,
                    label=f"{tag}-year upper bound not limited by the data")
        ax.plot(x[doubtful & ok] + (k - 1) * 0.12, level[doubtful & ok], "o", ms=11, mfc="none", mec="#e07000",
                mew=1.6, label="doubtful: verdict or neighbour check" if k == 0 else None)
    if (~ok).any():
        ymin = ax.get_ylim()[0]
        ax.plot(x[~ok], np.full((~ok).sum(), ymin), "x", color="k", ms=9, mew=2, label="study failed (no level)",
                clip_on=False)
    names = frame["station"].to_numpy()[order]
    if n <= _NAMED_MAX:
        ax.set_xticks(x, names, rotation=60, ha="right", fontsize=8)
    else:
        ax.set_xlabel(f"stations in coast order (by {summary.order.basis}), first to last")
    datums = sorted({str(d) for d in frame.loc[frame["status"] == "ok", "datum"]}) or ["unspecified"]
    ax.set_ylabel(f"still-water level [m above {datums[0] if len(datums) == 1 else 'each station datum'}]")
    ax.set_title(f"Design still-water levels along the coast (ordered by {summary.order.basis})")
    ax.grid(True, axis="y", alpha=0.3)
    ax.legend(fontsize=8, loc="best")
    return fig


def station_map_figure(summary: BatchSummary):
    """Stations by longitude and latitude coloured by the 100-year level (a Figure), or None without positions."""
    from matplotlib.figure import Figure

    frame = summary.to_frame()
    lat, lon = frame["lat"].to_numpy(float), frame["lon"].to_numpy(float)
    known = np.isfinite(lat) & np.isfinite(lon)
    if known.sum() < 1:
        return None
    level = frame["level_100_m"].to_numpy(float)
    ok = (frame["status"] == "ok").to_numpy()
    doubtful = _doubtful(summary)
    fig = Figure(figsize=(8.0, 6.4), layout="constrained")
    ax = fig.add_subplot()
    has = known & ok & np.isfinite(level)
    dense = known.sum() > _NAMED_MAX
    if has.any():
        points = ax.scatter(lon[has], lat[has], c=level[has], cmap="viridis", s=14 if dense else 60,
                            edgecolors="none" if dense else "k", linewidths=0.5, zorder=3)
        fig.colorbar(points, ax=ax, label=f"{HEADLINE_PERIOD_YEARS:g}-year level [m]")
    marked = known & doubtful & ok
    if marked.any():
        ax.scatter(lon[marked], lat[marked], s=240, facecolors="none", edgecolors="#e07000", linewidths=2,
                   zorder=4, label="doubtful: verdict or neighbour check")
    failed = known & ~ok
    if failed.any():
        ax.scatter(lon[failed], lat[failed], marker="x", s=30 if dense else 90, c="k", linewidths=1.2 if dense else 2,
                   zorder=4, label="study failed")
    if known.sum() <= _NAMED_MAX:
        for name, xx, yy in zip(frame["station"][known], lon[known], lat[known]):
            ax.annotate(str(name), (xx, yy), xytext=(5, 5), textcoords="offset points", fontsize=8)
    mid = float(np.nanmean(lat[known]))
    ax.set_aspect(1.0 / max(math.cos(math.radians(mid)), 0.05))  # equal distances east and north
    ax.margins(0.12)
    ax.set_xlabel("longitude [degrees east]")
    ax.set_ylabel("latitude [degrees north]")
    ax.set_title("Stations (no coastline drawn)")
    ax.grid(True, alpha=0.3)
    if marked.any() or failed.any():
        ax.legend(fontsize=8, loc="best")
    return fig


def batch_cautions(summary: BatchSummary) -> list[str]:
    """The cautions of the batch page: those of every study, plus what comparing stations adds."""
    frame = summary.to_frame()
    ok = frame["status"] == "ok"
    datums = sorted({str(d) for d in frame.loc[ok, "datum"]})
    epochs = sorted({round(float(o["epoch_year"]), 2) for o in summary.outcomes
                     if o["status"] == "ok" and np.isfinite(o.get("epoch_year", np.nan))})
    cautions = [
        "Still-water levels only: wave set-up, wave run-up, overtopping, seiches and river flow are not included; "
        "a design crest level adds these, an allowance for sea-level rise and a freeboard on top.",
    ]
    if not datums or "unspecified" in datums:
        cautions.append("Some stations have no stated vertical datum: their levels are relative to an unknown zero "
                        "and must not be compared with others or used until the datum is confirmed.")
    if len(datums) > 1:
        cautions.append("The stations' levels are on different vertical datums (" + ", ".join(datums) + "): "
                        "convert them to one datum before comparing stations or drawing a surface between them.")
    elif datums:
        cautions.append(f"Levels are in metres above {datums[0]}. Check the datum against the local levelling "
                        "datum before use.")
    if epochs:
        cautions.append("Levels are stated at the mean-sea-level epoch of each station (" +
                        ", ".join(f"{e:g}" for e in epochs[:6]) + (" ..." if len(epochs) > 6 else "") +
                        "); add the rise from that epoch to the year of interest.")
    cautions += [
        "Every level is an estimate with an uncertainty shown by its confidence interval; levels for return "
        "periods far beyond a station's record (more than about four times its length) are very uncertain.",
        "The neighbour check compares each 100-year level with its neighbours' using their intervals; it screens "
        "for stations that need a closer look (a faulty record, a datum error, a local effect such as a "
        "river mouth or a harbour), it does not prove a station right or wrong, and it cannot see an error "
        "shared by neighbouring stations.",
        "Between stations the levels are not interpolated here; the coast between them may differ.",
        "These results are inputs to engineering judgement. Local codes, permits, agency guidance and licensed "
        "professional practice govern any design level.",
    ]
    if summary.mode == "points":
        cautions.insert(-1, "Model points were studied in the model-point mode (no hourly check method, no "
                            "per-point figures or report); model output carries the model's own errors, to be "
                            "checked against gauges before use.")
    return cautions


def _esc(value) -> str:
    return html.escape(str(value), quote=True)


def _number(value, digits: int = 2) -> str:
    try:
        value = float(value)
    except (TypeError, ValueError):
        return ""
    return "" if not math.isfinite(value) else f"{value:.{digits}f}"


def _badge(text: str) -> str:
    css = {"ok": "ok", "check": "check", "unreliable": "unreliable", "not assessed": "na", "": "na"}.get(text, "na")
    return f'<span class="badge {css}">{_esc(text or "not assessed")}</span>'


def _table(summary: BatchSummary, frame: pd.DataFrame) -> str:
    periods = [float(p) for p in summary.periods_years]
    head = ["#", "station", "verdict", "neighbours", "method", "record [years]", "datum"]
    head += [f"{p:g}-year level [m] (interval)" for p in periods] + ["status"]
    rows = ["<table id=\"stations\"><thead><tr>" + "".join(f"<th>{_esc(h)}</th>" for h in head) +
            "</tr></thead><tbody>"]
    doubtful = _doubtful(summary)
    for i in np.argsort(np.asarray(summary.order.rank)):
        row = frame.iloc[i]
        ok = row["status"] == "ok"
        css = "failed" if not ok else ("doubtful" if doubtful[i] else "")
        name = _esc(row["station"])
        link = f'<a href="{_esc(quote(row["report"]))}">{name}</a>' if row["report"] else name
        cells = [f"<td>{int(row['coast_order']) + 1}</td>", f'<td class="text">{link}</td>',
                 f"<td>{_badge(row['assessment']) if ok else ''}</td>",
                 f"<td>{_badge(row['consistency']) if ok else ''}</td>",
                 f'<td class="text">{_esc(row["recommended_method"])}</td>',
                 f"<td>{_number(row['record_years'], 1)}</td>", f'<td class="text">{_esc(row["datum"])}</td>']
        for p in periods:
            tag = f"{p:g}"
            level, lower, upper = (row[f"{k}_{tag}_m"] for k in ("level", "lower", "upper"))
            text = _number(level)
            if text:
                text += f" ({_number(lower) or '?'} to {_number(upper) or 'unbounded'})"
            cells.append(f"<td>{text}</td>")
        status = "ok" if ok else f'<span class="badge failed-badge">failed</span> {_esc(row["status"])}'
        cells.append(f'<td class="text">{status}</td>')
        rows.append(f'<tr class="{css}" data-station="{name}">' + "".join(cells) + "</tr>")
    rows.append("</tbody></table>")
    return "\n".join(rows)


def _attention(summary: BatchSummary, frame: pd.DataFrame) -> str:
    items = []
    for i in np.argsort(np.asarray(summary.order.rank)):
        row, check = frame.iloc[i], summary.neighbours[i]
        name = _esc(row["station"])
        if row["status"] != "ok":
            items.append(f"<li><b>{name}</b>: the study failed: {_esc(row['status'])}</li>")
            continue
        reasons = []
        if row["assessment"] in _DOUBTFUL:
            reasons.append(f"verdict <b>{_esc(row['assessment'])}</b>: "
                           + _esc(row["assessment_reasons"] or "no reason given"))
        if check.status == "check":
            reasons.append("neighbour check: " + _esc("; ".join(check.reasons)))
        if reasons:
            items.append(f"<li><b>{name}</b>: " + "; ".join(reasons) + "</li>")
    if not items:
        return "<p>No station failed, none carries a <i>check</i> or <i>unreliable</i> verdict, and none " \
               "disagrees with its neighbours.</p>"
    return '<ul id="attention">' + "\n".join(items) + "</ul>"


def render_summary_page(summary: BatchSummary, figures: dict[str, bytes]) -> str:
    """The HTML text of ``summary.html`` (figures: PNG bytes by file stem, embedded in that order)."""
    from extremes import __version__

    frame = summary.to_frame()
    n = len(frame)
    doubtful = int(sum(o.get("assessment") in _DOUBTFUL for o in summary.outcomes))
    inconsistent = int(sum(c.status == "check" for c in summary.neighbours))
    captions = {
        "levels_along_coast": "Design still-water levels at the chosen return periods with their intervals, "
                              f"stations in coast order (by {summary.order.basis}). Orange rings: doubtful "
                              "stations (verdict check/unreliable or neighbour check); crosses: failed studies.",
        "station_map": f"Stations by longitude and latitude, coloured by the {HEADLINE_PERIOD_YEARS:g}-year level. "
                       "Orange rings: doubtful stations; crosses: failed studies. No coastline or map is drawn.",
    }
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>Design still-water levels along the coast: {n} stations</title>",
             f"<style>{_CSS}</style>", "</head>", "<body>",
             "<h1>Design still-water levels along the coast</h1>",
             f'<p id="counts">{n} stations: {summary.n_ok} studied ({summary.n_skipped} from earlier runs), '
             f"{summary.n_failed} failed, {doubtful} with a check or unreliable verdict, {inconsistent} "
             f"disagreeing with their neighbours. Stations ordered by {_esc(summary.order.basis)}.</p>",
             '<div class="caution"><b>Read the cautions at the end before using any level.</b> Still water only; '
             "levels are above each station's stated datum at its mean-sea-level epoch.</div>"]
    for k, (stem, png) in enumerate(figures.items(), start=1):
        data = base64.b64encode(png).decode("ascii")
        parts.append(f'<figure id="{stem}"><img src="data:image/png;base64,{data}" alt="{_esc(captions[stem])}">'
                     f"<figcaption>Figure {k}. {_esc(captions[stem])} (also saved as "
                     f"{FIGURE_FOLDER}/{stem}.png)</figcaption></figure>")
    if "station_map" not in figures:
        parts.append("<p>No station has a position (lat, lon): no map.</p>")
    parts += ["<h2>Stations to look at</h2>", _attention(summary, frame),
              "<h2>Every station</h2>",
              "<p>Verdict: the station's own plausibility checks (<i>ok</i>, <i>check</i>, <i>unreliable</i>). "
              "Neighbours: whether its 100-year level agrees with its neighbours' within their intervals. "
              "Each name links to the station's own report (or its results when no report was drawn).</p>",
              _table(summary, frame), "<h2>Cautions</h2>", '<ol id="cautions">']
    parts += [f"<li>{_esc(c)}</li>" for c in batch_cautions(summary)]
    now = _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%d %H:%M UTC")
    conf = frame["confidence"].dropna()
    parts += ["</ol>", "<h2>Provenance</h2>",
              f'<p class="meta">extremes {_esc(__version__)}; written {now}; mode {_esc(summary.mode)}; return '
              f"periods {_esc(', '.join(f'{p:g}' for p in summary.periods_years))} years; intervals at "
              f"{_esc(_number(100 * conf.iloc[0], 0) + ' %' if len(conf) else 'the stations’ confidence')}; "
              "each station's seed is in summary.csv. Tables: summary.csv, summary.nc.</p>",
              "</body>", "</html>"]
    return "\n".join(parts)


def write_summary_page(summary: BatchSummary) -> dict:
    """Draw the figures and write ``summary.html`` and ``summary_figures/*.png`` (atomic, replaced each run).

    Returns
    -------
    dict
        Paths written, by name (``page`` and each figure's stem).
    """
    figures = {"levels_along_coast": _png(levels_along_coast_figure(summary))}
    drawn = station_map_figure(summary)
    if drawn is not None:
        figures["station_map"] = _png(drawn)
    out = summary.out_dir
    paths = {}
    (out / FIGURE_FOLDER).mkdir(exist_ok=True)
    stale = out / FIGURE_FOLDER / "station_map.png"
    if "station_map" not in figures and stale.exists():
        stale.unlink()
    for stem, png in figures.items():
        paths[stem] = write_bytes_atomic(out / FIGURE_FOLDER / f"{stem}.png", png, overwrite=True)
    paths["page"] = write_text_atomic(out / "summary.html", render_summary_page(summary, figures), overwrite=True)
    logger.info("wrote %s", paths["page"])
    return paths
