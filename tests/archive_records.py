"""Archive-shaped records of the INVENTED harbour Port Orrindale (not a real place), for tests and benchmarks.

A long gauge record as archives hold them: sampling that changed from hourly to 15-minute to 6-minute
readings, a clock kept on UTC+1 for some months, a datum step after a resurvey, a genuine record storm that
looks like an outlier but is real, seasonal outages, and a few everyday faults. The true levels come from the
example harbour's process (:func:`make_examples.harbour_levels`), simulated on a 6-minute grid and read at
each era's interval, so the true still-water return levels are those of ``truth.json``.

:func:`archive_record` returns the CSV text (header ``time,level_m``, ISO 8601 stamps with ``Z``) and a dict
of everything injected, with the corrections a gauge's logs would give (``corrections_csv``).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from extremes.example_records import make_examples

__all__ = ["archive_record", "DEFAULT_PLAN"]

#: the record of the tests: 12 years, three sampling eras, every archive fault
DEFAULT_PLAN = {
    "eras": [("2012-01-01", "60min"), ("2018-01-01", "15min"), ("2021-01-01", "6min")],
    "end": "2024-01-01",
    # a clock on UTC+1 (summer time) for seven months; it was put right at a service visit (a 3-hour outage)
    "clock": {"start": "2015-03-29T01:00Z", "end": "2015-10-25T01:00Z", "offset_minutes": 60, "outage_hours": 3},
    # the gauge zero sank after a resurvey: readings 0.12 m too high from then on
    "datum_step": {"time": "2019-06-01T00:00Z", "size_m": 0.12},
    # a genuine record storm: an extra surge of 1.2 m peaking on a spring high tide
    "storm": {"peak": "2022-01-19T10:30Z", "extra_m": 1.2, "rise_hours": 7.0, "fall_hours": 10.0},
    # seasonal outages: winter and summer stretches without readings
    "outages": [("2013-01-08", 21), ("2016-07-01", 45), ("2020-01-20", 18), ("2022-08-01", 30)],
    "spikes": [("2014-05-03T07:00Z", 1.5), ("2019-02-11T13:15Z", -1.4), ("2023-03-09T04:36Z", 1.8)],
    "missing_code": "-99",
    "missing_codes": ["2013-06-01T05:00Z", "2018-09-14T10:45Z", "2022-11-02T17:12Z"],
}


def _era_times(plan: dict) -> pd.DatetimeIndex:
    pieces = []
    bounds = [pd.Timestamp(start, tz="UTC") for start, _ in plan["eras"]] + [pd.Timestamp(plan["end"], tz="UTC")]
    for (start, freq), end in zip(plan["eras"], bounds[1:]):
        pieces.append(pd.date_range(pd.Timestamp(start, tz="UTC"), end, freq=freq, inclusive="left"))
    return pieces[0].append(pieces[1:])


def archive_record(plan: dict | None = None, *, seed: int = 7) -> tuple[str, dict]:
    """CSV text of an archive-shaped record and the truth of what was put in it.

    Returns
    -------
    text : str
        ``time,level_m`` rows (levels to the millimetre, ``-99`` for a missing reading).
    truth : dict
        ``eras`` (start, interval minutes), ``clock``, ``datum_step``, ``storm`` (its peak time and true
        level), ``outages``, ``spikes`` (stamps as written), ``missing_codes``, ``n_rows`` and
        ``corrections_csv`` (the corrections file the gauge's logs give). The true return levels are those
        of ``example_records/truth.json`` (the same process).
    """
    plan = dict(DEFAULT_PLAN if plan is None else plan)
    rng = np.random.default_rng(seed)
    fine = pd.date_range(pd.Timestamp(plan["eras"][0][0], tz="UTC"), pd.Timestamp(plan["end"], tz="UTC"),
                         freq="6min", inclusive="left")
    level, _ = make_examples.harbour_levels(fine, rng)
    storm = plan.get("storm")
    if storm:
        hours = (fine - pd.Timestamp(storm["peak"])) / pd.Timedelta(hours=1)
        hours = np.asarray(hours, dtype=float)
        width = np.where(hours < 0, storm["rise_hours"], storm["fall_hours"])
        level = level + storm["extra_m"] * np.exp(-0.5 * (hours / width) ** 2)
    true = pd.Series(level, index=fine)
    times = _era_times(plan)
    # readings at each era's stamps; quarter-hour stamps between 6-minute nodes linearly interpolated
    fine_ns = fine.as_unit("ns").asi8.astype(float)
    values = np.interp(times.as_unit("ns").asi8.astype(float), fine_ns, level)
    # outages: no rows at all
    keep = np.ones(times.size, dtype=bool)
    for start, days in plan.get("outages", []):
        t0 = pd.Timestamp(start, tz="UTC")
        keep &= ~((times >= t0) & (times < t0 + pd.Timedelta(days=days)))
    # datum step: the readings from the step on are too high by size_m
    step = plan.get("datum_step")
    if step:
        values = values + np.where(times >= pd.Timestamp(step["time"]), step["size_m"], 0.0)
    stamps = times
    clock = plan.get("clock")
    if clock:
        c0, c1 = pd.Timestamp(clock["start"]), pd.Timestamp(clock["end"])
        inside = (times >= c0) & (times < c1)
        keep &= ~((times >= c1) & (times < c1 + pd.Timedelta(hours=clock["outage_hours"])))
        stamps = times.where(~inside, times + pd.Timedelta(minutes=clock["offset_minutes"]))
    text_values = np.char.mod("%.3f", np.round(values, 3)).astype(object)
    for when, offset in plan.get("spikes", []):
        at = np.flatnonzero(times == pd.Timestamp(when))
        text_values[at] = f"{np.round(values[at][0] + offset, 3):.3f}"
    for when in plan.get("missing_codes", []):
        text_values[np.flatnonzero(times == pd.Timestamp(when))] = plan["missing_code"]
    stamps, text_values = stamps[keep], text_values[keep]
    iso = np.char.add(np.datetime_as_string(stamps.tz_localize(None).to_numpy(), unit="s"), "Z")
    body = np.char.add(np.char.add(iso.astype(str), ","), text_values.astype(str))
    text = "time,level_m\n" + "\n".join(body.tolist()) + "\n"
    truth = {
        "eras": [{"start": start, "interval_minutes": pd.Timedelta(freq) / pd.Timedelta(minutes=1)}
                 for start, freq in plan["eras"]],
        "clock": clock, "datum_step": step, "outages": plan.get("outages", []), "spikes": plan.get("spikes", []),
        "missing_codes": plan.get("missing_codes", []), "n_rows": int(keep.sum()),
        "storm": None if not storm else {"peak": storm["peak"],
                                         "true_max_m": float(true[pd.Timestamp(storm["peak"]) - pd.Timedelta(hours=12):
                                                                  pd.Timestamp(storm["peak"]) + pd.Timedelta(hours=12)].max())},
        "corrections_csv": _corrections(clock, step, plan["end"]),
    }
    return text, truth


def _corrections(clock, step, end) -> str:
    lines = ["# from the gauge's logs: clock on UTC+1 for a summer; gauge zero 0.12 m low after the resurvey",
             "start,end,add_m,shift_minutes"]
    if clock:
        # stamps as read: the span's readings were stamped offset minutes late
        start = pd.Timestamp(clock["start"]) + pd.Timedelta(minutes=clock["offset_minutes"])
        stop = pd.Timestamp(clock["end"]) + pd.Timedelta(minutes=clock["offset_minutes"])
        lines.append(f"{start:%Y-%m-%dT%H:%MZ},{stop:%Y-%m-%dT%H:%MZ},0,{-clock['offset_minutes']}")
    if step:
        lines.append(f"{pd.Timestamp(step['time']):%Y-%m-%dT%H:%MZ},,{-step['size_m']},0")
    return "\n".join(lines) + "\n"
