"""Generator of the example records of Port Orrindale, an INVENTED harbour (not a real place).

Run from the project folder::

    python -m extremes.example_records.make_examples            # writes into example_records/
    python -m extremes.example_records.make_examples --out DIR --years-simulated 50000

It writes, with the fixed seed :data:`SEED`:

* ``harbour_hourly.csv.gz``: 30 years (1994-2023) of hourly levels of Port Orrindale, with the everyday faults
  a quality control must find (no datum shift: this is the demo record of the study);
* ``harbour_faults.csv``: a short (3-year) record of the same process holding every fault, a datum shift included;
* ``veyra_sound_10min.csv.gz``: 2 years at 10 minutes of a second invented gauge with a mixed tide, in another
  layout (semicolon, date and time columns, centimetres with decimal comma, local stamps at +10:00, code 9999);
* ``truth.json``: every value the scenario used, the faults injected and the true still-water return levels
  from a long simulation of the same process.

Everything is random from ``numpy.random.default_rng`` streams derived from :data:`SEED`; the tide comes from
:func:`extremes.tide.harmonic.predict_tide` (nodal corrections at each hour).
"""
from __future__ import annotations

import argparse
import gzip
import hashlib
import io
import json
import logging
import math
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import signal, stats

from extremes.tide.harmonic import predict_tide

logger = logging.getLogger(__name__)

SEED = 20261202
HARBOUR = "Port Orrindale"
DATUM = "Orrindale Gauge Zero (invented)"
HOURLY_NAME = "harbour_hourly.csv.gz"
FAULTS_NAME = "harbour_faults.csv"
MIXED_NAME = "veyra_sound_10min.csv.gz"
TRUTH_NAME = "truth.json"
PERIODS_YEARS = (2, 5, 10, 20, 50, 100, 200, 500, 1000)

#: harmonic constants of Port Orrindale: name -> (amplitude [m], Greenwich phase lag [deg]); semidiurnal,
#: meso-tidal (mean spring range about 2 (H_M2 + H_S2) = 2.96 m), form factor 0.15.
HARBOUR_TIDE = {
    "M2": (1.100, 95.0), "S2": (0.380, 135.0), "N2": (0.220, 75.0), "K2": (0.105, 131.0),
    "K1": (0.120, 205.0), "O1": (0.100, 185.0), "P1": (0.040, 201.0), "Q1": (0.025, 165.0),
    "M4": (0.050, 210.0), "MS4": (0.030, 262.0), "MN4": (0.018, 190.0),
    "Sa": (0.060, 250.0), "Ssa": (0.020, 60.0),
}

#: mean sea level: MSL(t) = MSL_2000 + rate (t - 2000.0) + annual anomaly (AR(1) between years)
MSL = {"msl_at_2000_m": 2.600, "reference_year": 2000.0, "trend_m_per_year": 0.0030,
       "annual_anomaly_std_m": 0.020, "annual_anomaly_ar1": 0.5}

#: surge process of Port Orrindale (see README.md)
SURGE = {
    "background_std_m": 0.080, "background_seasonal_amplitude": 0.35, "background_efolding_hours": 30.0,
    "storms_per_year": 6.0, "storm_seasonal_amplitude": 0.9, "season_peak_day_of_year": 15.0,
    "peak_threshold_m": 0.25, "peak_gpd_scale_m": 0.18, "peak_gpd_shape": 0.08,
    "rise_sd_hours": 10.0, "fall_sd_hours": 16.0,
}

#: harmonic constants of Veyra Sound (mixed tide, form factor 0.93)
MIXED_TIDE = {
    "M2": (0.420, 300.0), "S2": (0.140, 330.0), "N2": (0.080, 280.0), "K2": (0.040, 328.0),
    "K1": (0.310, 60.0), "O1": (0.210, 35.0), "P1": (0.100, 58.0), "Q1": (0.040, 20.0),
    "M4": (0.010, 100.0), "Sa": (0.050, 40.0), "Ssa": (0.020, 200.0),
}
MIXED = {"msl_m": 1.600, "trend_m_per_year": 0.0, "background_std_m": 0.050, "background_efolding_hours": 24.0,
         "storms_per_year": 3.0, "peak_threshold_m": 0.10, "peak_gpd_scale_m": 0.10, "peak_gpd_shape": 0.05,
         "rise_sd_hours": 8.0, "fall_sd_hours": 12.0, "utc_offset": "+10:00"}

_HOUR_NS = 3_600_000_000_000


# ---------------------------------------------------------------------------------------------------------
# processes
# ---------------------------------------------------------------------------------------------------------
def _decimal_year(times: pd.DatetimeIndex) -> np.ndarray:
    years = times.year.to_numpy()
    start = (years - 1970).astype("datetime64[Y]").astype("datetime64[ns]").astype(np.int64)
    end = (years - 1969).astype("datetime64[Y]").astype("datetime64[ns]").astype(np.int64)
    return years + (times.as_unit("ns").asi8 - start) / (end - start)


def tide_m(times: pd.DatetimeIndex, constants: dict) -> np.ndarray:
    """Astronomical tide about the mean [m] from harmonic constants (nodal corrections at each time)."""
    names = list(constants)
    amps = [constants[n][0] for n in names]
    phases = [constants[n][1] for n in names]
    return predict_tide(times, names, amps, phases, z0_m=0.0)


def storm_mean_m(p: dict) -> float:
    """Long-run mean of the storm part of the surge [m]: rate x mean peak x hydrograph area (hourly sum)."""
    mean_peak = p["peak_threshold_m"] + p["peak_gpd_scale_m"] / (1.0 - p["peak_gpd_shape"])
    area_h = math.sqrt(2 * math.pi) * (p["rise_sd_hours"] + p["fall_sd_hours"]) / 2.0
    return p["storms_per_year"] / 8766.0 * mean_peak * area_h


def simulate_surge(hours: np.ndarray, day_of_year: np.ndarray, rng: np.random.Generator, p: dict,
                   *, seasonal: bool = True) -> tuple[np.ndarray, pd.DataFrame]:
    """Surge [m] at regularly spaced hours (float, any step), and the table of storms.

    Background: AR(1) with e-folding time ``background_efolding_hours`` and a seasonal standard deviation
    ``std (1 + a cos(2 pi (doy - peak)/365.25))``. Storms: Poisson process of rate
    ``storms_per_year (1 + b cos(...))`` (thinning), peak height ``threshold + GPD(scale, shape)``, asymmetric
    Gaussian hydrograph (rise sd, fall sd) centred on a continuous peak time. The long-run storm mean is
    subtracted so that the surge has mean zero. Storm times are drawn independently of the tide.
    """
    n = hours.size
    step_h = float(hours[1] - hours[0])
    season = np.cos(2 * np.pi * (day_of_year - p.get("season_peak_day_of_year", 15.0)) / 365.25)
    a = p.get("background_seasonal_amplitude", 0.0) if seasonal else 0.0
    b = p.get("storm_seasonal_amplitude", 0.0) if seasonal else 0.0
    phi = math.exp(-step_h / p["background_efolding_hours"])
    sd = p["background_std_m"] * (1.0 + a * season)
    background = signal.lfilter([1.0], [1.0, -phi], rng.standard_normal(n) * sd * math.sqrt(1 - phi * phi))
    # storms by thinning a homogeneous Poisson process of rate (1 + b) * storms_per_year
    span_h = hours[-1] - hours[0] + step_h
    lam_max = p["storms_per_year"] * (1.0 + b) / 8766.0
    n_cand = rng.poisson(lam_max * span_h)
    t_cand = hours[0] + rng.random(n_cand) * span_h
    doy_cand = np.interp(t_cand, hours, day_of_year)
    accept = rng.random(n_cand) < (1.0 + b * np.cos(2 * np.pi * (doy_cand - p.get("season_peak_day_of_year", 15.0))
                                                     / 365.25)) / (1.0 + b)
    t_storm = np.sort(t_cand[accept])
    peaks = p["peak_threshold_m"] + stats.genpareto.rvs(p["peak_gpd_shape"], scale=p["peak_gpd_scale_m"],
                                                        size=t_storm.size, random_state=rng)
    storms = np.zeros(n)
    rise, fall = p["rise_sd_hours"], p["fall_sd_hours"]
    offsets = np.arange(-int(5 * rise / step_h) - 1, int(6 * fall / step_h) + 2)
    for s in range(0, t_storm.size, 20000):
        ts, pk = t_storm[s:s + 20000], peaks[s:s + 20000]
        i0 = np.floor((ts - hours[0]) / step_h).astype(np.int64)
        idx = i0[:, None] + offsets[None, :]
        tau = hours[0] + idx * step_h - ts[:, None]
        shape = np.exp(-0.5 * (tau / np.where(tau < 0, rise, fall)) ** 2)
        ok = (idx >= 0) & (idx < n)
        np.add.at(storms, idx[ok], (pk[:, None] * shape)[ok])
    surge = background + storms - storm_mean_m(p)
    table = pd.DataFrame({"peak_hour": t_storm, "peak_m": peaks})
    return surge, table


def annual_anomalies(years: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """Stationary AR(1) sequence of annual MSL anomalies [m] for consecutive years."""
    phi, sd = MSL["annual_anomaly_ar1"], MSL["annual_anomaly_std_m"]
    e = rng.standard_normal(years.size) * sd * math.sqrt(1 - phi * phi)
    e[0] = rng.standard_normal() * sd
    return _ar1(e, phi)


def _ar1(e: np.ndarray, phi: float) -> np.ndarray:
    out = np.empty_like(e)
    out[0] = e[0]
    for i in range(1, e.size):
        out[i] = phi * out[i - 1] + e[i]
    return out


def msl_line_m(decimal_years: np.ndarray) -> np.ndarray:
    """Linear MSL of the scenario [m above the invented gauge zero]."""
    return MSL["msl_at_2000_m"] + MSL["trend_m_per_year"] * (np.asarray(decimal_years) - MSL["reference_year"])


def harbour_levels(times: pd.DatetimeIndex, rng: np.random.Generator) -> tuple[np.ndarray, dict]:
    """True hourly still-water levels of Port Orrindale [m] and the components used."""
    dyear = _decimal_year(times)
    years = np.arange(times[0].year - 1, times[-1].year + 2)
    anomaly_years = annual_anomalies(years, rng)
    anomaly = np.interp(dyear, years + 0.5, anomaly_years)
    hours = (times.as_unit("ns").asi8 - times[0].as_unit("ns").value) / _HOUR_NS
    surge, storms = simulate_surge(hours, times.day_of_year.to_numpy(dtype=float), rng, SURGE)
    tide = tide_m(times, HARBOUR_TIDE)
    level = msl_line_m(dyear) + anomaly + tide + surge
    return level, {"anomaly_by_year": dict(zip(years.tolist(), anomaly_years.round(4).tolist())),
                   "storms": storms, "tide": tide, "surge": surge}


# ---------------------------------------------------------------------------------------------------------
# faults
# ---------------------------------------------------------------------------------------------------------
def _iso(times: pd.DatetimeIndex, style: str) -> np.ndarray:
    """ISO 8601 stamps ``YYYY-MM-DDTHH:MM:SSZ`` (style "Z") or ``YYYY-MM-DD HH:MM:SS+00:00``."""
    text = np.datetime_as_string(times.tz_convert("UTC").tz_localize(None).to_numpy(), unit="s").astype(object)
    if style == "Z":
        return text + "Z"
    return np.array([t.replace("T", " ") for t in text], dtype=object) + "+00:00"


def inject_faults(times: pd.DatetimeIndex, level_m: np.ndarray, rng: np.random.Generator, plan: dict,
                  *, style: str = "Z", missing_code: str = "-99") -> tuple[str, dict]:
    """CSV text (header ``time,level_m``) of a record with the planned faults, and the list of faults.

    ``plan`` keys: ``outages`` [(start ISO, hours)], ``single_drops``, ``missing_codes``, ``empty_values``,
    ``spikes``, ``flatlines`` [(start ISO, hours)], ``identical_duplicates``, ``conflicting_duplicates``,
    ``swaps``, ``datum_shift`` (None or (start ISO, end ISO, step m)).
    """
    n = times.size
    values = np.round(level_m, 3)
    true_values = values.copy()
    keep = np.ones(n, dtype=bool)
    reserved = np.zeros(n, dtype=bool)   # rows already used by a fault (faults never overlap)
    faults: dict = {}
    pos_of = {t: i for i, t in enumerate(times.as_unit("ns").asi8.tolist())}

    def index_of(stamp: str) -> int:
        return pos_of[pd.Timestamp(stamp).as_unit("ns").value]

    # outages: rows absent
    outages = []
    for start, hours in plan["outages"]:
        i = index_of(start)
        keep[i:i + hours] = False
        reserved[max(i - 48, 0):i + hours + 48] = True
        outages.append({"start": times[i].isoformat(), "end": times[i + hours - 1].isoformat(), "hours": hours})
    faults["outages"] = outages

    def draw(count: int, margin: int = 3) -> np.ndarray:
        picked = []
        while len(picked) < count:
            i = int(rng.integers(margin + 24, n - margin - 24))
            if not reserved[i - margin:i + margin + 1].any():
                reserved[i - margin:i + margin + 1] = True
                picked.append(i)
        return np.sort(np.array(picked, dtype=np.int64))

    drops = draw(plan["single_drops"])
    keep[drops] = False
    faults["single_missing_rows"] = [times[i].isoformat() for i in drops]

    # datum shift: a step added over a span (before the other value faults, which act on top)
    shift = plan.get("datum_shift")
    if shift:
        i0, i1 = index_of(shift[0]), index_of(shift[1])
        values[i0:i1 + 1] += shift[2]
        faults["datum_shift"] = {"start": times[i0].isoformat(), "end": times[i1].isoformat(), "step_m": shift[2],
                                 "rows": int(keep[i0:i1 + 1].sum())}

    # flat lines: the value of the first hour repeated
    flat = []
    for start, hours in plan["flatlines"]:
        i = index_of(start)
        values[i:i + hours] = values[i]
        reserved[i - 3:i + hours + 3] = True
        flat.append({"start": times[i].isoformat(), "hours": hours, "value_m": float(values[i])})
    faults["flatlines"] = flat

    spikes_at = draw(plan["spikes"])
    signs = np.where(np.arange(spikes_at.size) % 2 == 0, 1.0, -1.0)
    sizes = np.round(signs * rng.uniform(0.8, 2.5, spikes_at.size), 3)
    values[spikes_at] += sizes
    faults["spikes"] = [{"time": times[i].isoformat(), "offset_m": float(s), "true_level_m": float(true_values[i]),
                         "recorded_m": float(np.round(values[i], 3))} for i, s in zip(spikes_at, sizes)]

    text_values = np.array([f"{v:.3f}" for v in values], dtype=object)
    codes = draw(plan["missing_codes"])
    text_values[codes] = missing_code
    faults["missing_codes"] = {"code": missing_code, "times": [times[i].isoformat() for i in codes]}
    empties = draw(plan["empty_values"])
    text_values[empties] = ""
    faults["empty_values"] = [times[i].isoformat() for i in empties]

    stamps = _iso(times, style)
    rows = stamps + "," + text_values

    # duplicates and swaps act on the row list (positions drawn among kept rows)
    dup_ident = draw(plan["identical_duplicates"])
    dup_conf = draw(plan["conflicting_duplicates"])
    conf_offsets = np.round(rng.uniform(0.05, 0.30, dup_conf.size), 3)
    swaps = draw(plan["swaps"])
    extra: dict[int, str] = {}
    for i in dup_ident:
        extra[int(i)] = rows[i]
    for i, off in zip(dup_conf, conf_offsets):
        extra[int(i)] = stamps[i] + "," + f"{values[i] + off:.3f}"
    faults["identical_duplicates"] = [times[i].isoformat() for i in dup_ident]
    faults["conflicting_duplicates"] = [{"time": times[i].isoformat(), "first_m": float(values[i]),
                                         "second_m": float(np.round(values[i] + off, 3))}
                                        for i, off in zip(dup_conf, conf_offsets)]
    faults["swapped_pairs"] = [times[i].isoformat() for i in swaps]
    for i in swaps:
        rows[i], rows[i + 1] = rows[i + 1], rows[i]
    # extra (duplicate) rows follow their original: sort keys 2i (original) and 2i + 1 (extra)
    extra_pos = np.array(sorted(extra), dtype=np.int64)
    keys = np.concatenate([2 * np.flatnonzero(keep), 2 * extra_pos + 1])
    lines = np.concatenate([rows[keep], np.array([extra[int(i)] for i in extra_pos], dtype=object)])
    out = lines[np.argsort(keys, kind="stable")].tolist()
    text = "time,level_m\n" + "\n".join(out) + "\n"
    faults["rows_written"] = len(out)
    faults["grid_hours"] = int(n)
    faults["absent_hours"] = int((~keep).sum())
    return text, faults


def _write_text(path: Path, text: str) -> str:
    data = text.encode("ascii")
    if path.name.endswith(".gz"):
        buf = io.BytesIO()
        with gzip.GzipFile(filename="", mode="wb", fileobj=buf, mtime=0, compresslevel=9) as gz:
            gz.write(data)
        path.write_bytes(buf.getvalue())
    else:
        path.write_bytes(data)
    return hashlib.sha256(data).hexdigest()


HOURLY_PLAN = {
    "outages": [("1996-05-10T06:00Z", 72), ("1999-08-01T00:00Z", 288), ("2009-01-03T00:00Z", 105 * 24),
                ("2015-06-14T09:00Z", 20), ("2019-09-02T00:00Z", 144), ("2021-02-11T12:00Z", 36)],
    "single_drops": 15, "missing_codes": 40, "empty_values": 10, "spikes": 12,
    "flatlines": [("2012-07-14T03:00Z", 18), ("2017-03-02T10:00Z", 8)],
    "identical_duplicates": 6, "conflicting_duplicates": 4, "swaps": 3, "datum_shift": None,
}

FAULTS_PLAN = {
    "outages": [("2021-04-03T00:00Z", 30), ("2022-10-20T00:00Z", 200)],
    "single_drops": 5, "missing_codes": 12, "empty_values": 5, "spikes": 8,
    "flatlines": [("2021-08-09T02:00Z", 12), ("2023-02-15T06:00Z", 6)],
    "identical_duplicates": 4, "conflicting_duplicates": 3, "swaps": 2,
    "datum_shift": ("2022-06-01T00:00Z", "2023-12-31T23:00Z", 0.080),
}


def make_hourly(seed: int = SEED, *, start: str = "1994-01-01", end: str = "2023-12-31 23:00",
                plan: dict | None = None, style: str = "Z") -> tuple[str, dict]:
    """CSV text and truth of the long hourly record (stream 0 of ``seed``)."""
    rng = np.random.default_rng([seed, 0])
    times = pd.date_range(start, end, freq="h", tz="UTC")
    level, parts = harbour_levels(times, rng)
    text, faults = inject_faults(times, level, rng, HOURLY_PLAN if plan is None else plan, style=style)
    return text, {"start": times[0].isoformat(), "end": times[-1].isoformat(), "faults": faults,
                  "annual_msl_anomaly_m": parts["anomaly_by_year"], "storms": int(len(parts["storms"]))}


def make_faults(seed: int = SEED) -> tuple[str, dict]:
    """CSV text and truth of the short record with every fault (stream 1 of ``seed``)."""
    rng = np.random.default_rng([seed, 1])
    times = pd.date_range("2021-01-01", "2023-12-31 23:00", freq="h", tz="UTC")
    level, parts = harbour_levels(times, rng)
    text, faults = inject_faults(times, level, rng, FAULTS_PLAN, style="offset")
    return text, {"start": times[0].isoformat(), "end": times[-1].isoformat(), "faults": faults,
                  "annual_msl_anomaly_m": parts["anomaly_by_year"]}


def make_mixed(seed: int = SEED) -> tuple[str, dict]:
    """Text and truth of the 10-minute mixed-tide record in its own layout (stream 2 of ``seed``)."""
    rng = np.random.default_rng([seed, 2])
    local = pd.date_range("2022-01-01 00:00", "2023-12-31 23:50", freq="10min")
    times = (local - pd.Timedelta(hours=10)).tz_localize("UTC")
    hours = (times.as_unit("ns").asi8 - times[0].as_unit("ns").value) / _HOUR_NS
    surge, storms = simulate_surge(hours, times.day_of_year.to_numpy(dtype=float), rng, MIXED, seasonal=False)
    level = MIXED["msl_m"] + tide_m(times, MIXED_TIDE) + surge
    cm = np.round(level * 100.0, 1)
    text_cm = np.array([f"{v:.1f}".replace(".", ",") for v in cm], dtype=object)
    codes = np.sort(rng.choice(np.arange(100, times.size - 100), size=20, replace=False))
    text_cm[codes] = "9999"
    keep = np.ones(times.size, dtype=bool)
    gap_start = int(np.flatnonzero(local == pd.Timestamp("2023-05-17 08:00"))[0])
    keep[gap_start:gap_start + 2 * 144] = False
    iso = pd.Series(np.datetime_as_string(local.to_numpy(), unit="m"))
    dates = (iso.str[8:10] + "/" + iso.str[5:7] + "/" + iso.str[0:4]).to_numpy(dtype=object)
    clock = iso.str[11:16].to_numpy(dtype=object)
    body = (dates + ";" + clock + ";" + text_cm)[keep].tolist()
    lines = ["date;time;level_cm"] + body
    text = "\n".join(lines) + "\n"
    return text, {"start_local": str(local[0]), "start_utc": times[0].isoformat(), "end_utc": times[-1].isoformat(),
                  "rows_written": len(lines) - 1, "missing_code": "9999",
                  "missing_code_local_times": [str(local[i]) for i in codes],
                  "outage": {"start_local": str(local[gap_start]), "rows": 288}, "storms": int(len(storms))}


# ---------------------------------------------------------------------------------------------------------
# true return levels
# ---------------------------------------------------------------------------------------------------------
def simulated_annual_maxima(n_years: int, seed: int = SEED, *, epoch_year: float = 2024.0,
                            chunk_years: int = 200) -> np.ndarray:
    """Annual maxima [m] of hourly still-water levels of the scenario held at the MSL of ``epoch_year``.

    Each simulated year has 8760 hours; the tide of year k is the predicted tide of calendar year
    2005 + (k mod 19) (19 years cover the 18.61-year nodal cycle); surge and the annual MSL anomaly are simulated
    afresh (stream 3 of ``seed``), the anomaly held constant within a year.
    """
    rng = np.random.default_rng([seed, 3])
    tide_years = []
    for y in range(2005, 2024):
        t = pd.date_range(f"{y}-01-01", periods=8760, freq="h", tz="UTC")
        tide_years.append(tide_m(t, HARBOUR_TIDE))
    tide = np.stack(tide_years)
    doy = np.tile(np.arange(8760) / 24.0 + 1.0, chunk_years)
    hours = np.arange(8760 * chunk_years, dtype=float)
    anomalies = annual_anomalies(np.arange(n_years), rng)
    maxima = np.empty(n_years)
    base = float(msl_line_m(epoch_year))
    for s in range(0, n_years, chunk_years):
        m = min(chunk_years, n_years - s)
        surge, _ = simulate_surge(hours, doy, rng, SURGE)
        level = surge.reshape(chunk_years, 8760)[:m] + tide[(np.arange(s, s + m)) % 19]
        maxima[s:s + m] = level.max(axis=1) + anomalies[s:s + m] + base
    return maxima


def true_return_levels(maxima: np.ndarray, periods_years=PERIODS_YEARS) -> list[dict]:
    """Empirical quantiles ``1 - 1/T`` of simulated annual maxima, with a 95 % order-statistic interval."""
    x = np.sort(maxima)
    n = x.size
    out = []
    for t in periods_years:
        q = 1.0 - 1.0 / t
        lo_k, hi_k = stats.binom.ppf([0.025, 0.975], n, q).astype(int)
        out.append({"return_period_years": t, "aep": 1.0 / t, "level_m": round(float(np.quantile(x, q)), 3),
                    "mc_lower_m": round(float(x[max(lo_k - 1, 0)]), 3),
                    "mc_upper_m": round(float(x[min(hi_k, n - 1)]), 3)})
    return out


# ---------------------------------------------------------------------------------------------------------
def build(out: Path, *, n_years_simulated: int = 50000, seed: int = SEED) -> dict:
    """Write every record and truth.json into ``out``; return the truth."""
    out.mkdir(parents=True, exist_ok=True)
    truth: dict = {
        "scenario": f"{HARBOUR} and Veyra Sound are invented places; every value below was chosen for this "
                    "example and describes no real gauge.",
        "generator": "example_records/make_examples.py", "seed": seed, "datum": DATUM,
        "harbour_tide": {k: {"amplitude_m": a, "phase_deg": g} for k, (a, g) in HARBOUR_TIDE.items()},
        "mean_sea_level": {**MSL, "msl_at_epoch_m": round(float(msl_line_m(2024.0)), 4), "epoch_year": 2024.0},
        "surge": {**SURGE, "storm_mean_subtracted_m": round(storm_mean_m(SURGE), 5),
                  "independent_of_tide": True},
        "mixed_tide": {k: {"amplitude_m": a, "phase_deg": g} for k, (a, g) in MIXED_TIDE.items()},
        "mixed": {**MIXED, "storm_mean_subtracted_m": round(storm_mean_m(MIXED), 5)},
        "records": {},
    }
    text, info = make_hourly(seed)
    info["sha256_text"] = _write_text(out / HOURLY_NAME, text)
    truth["records"][HOURLY_NAME] = info
    text, info = make_faults(seed)
    info["sha256_text"] = _write_text(out / FAULTS_NAME, text)
    truth["records"][FAULTS_NAME] = info
    text, info = make_mixed(seed)
    info["sha256_text"] = _write_text(out / MIXED_NAME, text)
    truth["records"][MIXED_NAME] = info
    logger.info("simulating %d years of annual maxima", n_years_simulated)
    maxima = simulated_annual_maxima(n_years_simulated, seed)
    truth["return_levels"] = {
        "epoch_year": 2024.0, "n_years_simulated": int(n_years_simulated),
        "definition": "annual maxima of hourly still-water levels (calendar years, UTC) at the MSL of the epoch; "
                      "T-year level = quantile 1 - 1/T of the simulated annual maxima",
        "levels": true_return_levels(maxima),
    }
    (out / TRUTH_NAME).write_text(json.dumps(truth, indent=1, sort_keys=False) + "\n")
    return truth


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent)
    parser.add_argument("--years-simulated", type=int, default=50000)
    parser.add_argument("--seed", type=int, default=SEED)
    args = parser.parse_args(argv)
    logging.basicConfig(level=logging.INFO)
    build(args.out, n_years_simulated=args.years_simulated, seed=args.seed)


if __name__ == "__main__":
    main()
