"""The model-point mode: the same answer as the full study, a tide design shared by a block, and tasks spread
over the workers of a dask cluster."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes import batch
from extremes.study_options import StudyOptions
from extremes.tide.harmonic import analyse_tide, shared_design
from tests.test_batch import OptionsForTests, station_study_for_tests

# principal constituents: speeds [deg/h] from the tables of Schureman (1958); amplitudes of an invented coast
TIDES = ((1.0, 28.9841042), (0.35, 30.0), (0.2, 15.0410686), (0.15, 13.9430356), (0.08, 28.4397295))


def tidal_points(n_points: int, *, years: float, seed: int = 3, start="2012-01-01") -> pd.DataFrame:
    """TEST HELPER: hourly levels [m] of ``n_points`` model points (columns): tides, shared storms, noise."""
    times = pd.date_range(start, periods=int(years * 365.25 * 24), freq="h", tz="UTC")
    hours = np.arange(times.size)
    rng = np.random.default_rng(seed)
    storms = np.convolve(rng.gumbel(0.0, 0.03, times.size), np.ones(24) / 6, mode="same")
    columns = {}
    for j in range(n_points):
        tide = sum(a * (1 + 0.1 * j) * np.cos(np.deg2rad(speed * hours - 40.0 * j - 17.0 * k))
                   for k, (a, speed) in enumerate(TIDES))
        columns[f"p{j}"] = tide + storms * (1 + 0.05 * j) + rng.normal(0, 0.01, times.size)
    return pd.DataFrame(columns, index=times)


def write_gridded(path, frame: pd.DataFrame) -> None:
    """TEST HELPER: the points as CF NetCDF (time x node, centimetres, a chainage coordinate)."""
    import xarray as xr

    n = frame.shape[1]
    xr.Dataset({"zeta": (("time", "node"), (100 * frame.to_numpy()).astype("float64"),
                         {"units": "cm", "standard_name": "sea_surface_height_above_geopotential_datum"})},
               coords={"time": frame.index.tz_localize(None),
                       "station": ("node", np.array(list(frame.columns), dtype=object), {"cf_role": "timeseries_id"}),
                       "lat": ("node", np.linspace(-41.0, -41.2, n), {"standard_name": "latitude"}),
                       "lon": ("node", np.linspace(173.0, 173.3, n), {"standard_name": "longitude"}),
                       "chainage": ("node", np.arange(n) * 12.5)}).to_netcdf(path, engine="netcdf4")


def _constituents(model):
    return np.array([[c.amplitude_m, c.phase_deg] for c in model.constituents])


@pytest.mark.parametrize("years, trend", [(2.0, False), (0.5, True)])
def test_shared_design_gives_the_same_tide_fit(years, trend):
    frame = tidal_points(2, years=years)
    if years < 1:  # half a year does not resolve P1 from K1 nor K2 from S2: both are inferred
        assert {c.name for c in analyse_tide(frame["p0"]).constituents if c.inferred} >= {"P1", "K2"}
    alone = [analyse_tide(frame[c], trend=trend) for c in frame]
    gappy = frame["p1"].drop(frame.index[100:130])  # other sample times: its own design, not the shared one
    with shared_design():
        shared = [analyse_tide(frame[c], trend=trend) for c in frame]
        gappy_shared = analyse_tide(gappy, trend=trend)
    gappy_alone = analyse_tide(gappy, trend=trend)
    for a, b in list(zip(alone, shared)) + [(gappy_alone, gappy_shared)]:
        np.testing.assert_allclose(_constituents(a), _constituents(b), rtol=0, atol=1e-9)
        assert a.z0_m == pytest.approx(b.z0_m, abs=1e-12)
        assert a.residual_std_m == pytest.approx(b.residual_std_m, rel=1e-9)
        if trend:
            assert a.trend_m_per_year == pytest.approx(b.trend_m_per_year, abs=1e-12)


def _levels(document) -> dict:
    return {(r["method"], r["return_period_years"]): r for r in document["return_levels"]}


@pytest.mark.slow  # whole studies
# two years hold too few storm peaks for the timing test of the interaction tests: said, expected here
@pytest.mark.filterwarnings("ignore:only .* independent residual peaks:extremes.errors.ExtremesWarning")
def test_model_point_mode_matches_the_full_study(tmp_path):
    path = tmp_path / "model.nc"
    write_gridded(path, tidal_points(2, years=2.0))
    options = StudyOptions(periods_years=(10.0, 100.0), resamples=40, seed=4)
    block = batch.gridded_blocks(path, block_size=2)[0]
    (tmp_path / "fast").mkdir()
    (tmp_path / "full").mkdir()
    fast = batch.run_item(block, study=batch.study_point, options=options, base_seed=4, out_dir=tmp_path / "fast",
                          overwrite=False, share_tide_design=True)
    assert [o["status"] for o in fast] == ["ok", "ok"]
    for point, series in zip(block.stations(), batch.block_series(block, block.indices)):
        full = batch.study_station(batch.Station(name=point.name, level_m=series, datum=point.datum,
                                                 source=point.source),
                                   options=options, seed=batch.station_seed(4, point.name),
                                   out_dir=tmp_path / "full" / point.name, figures=False)
        quick = batch.completed_results(tmp_path / "fast" / point.name)
        assert quick["recommended_method"] == full["recommended_method"]
        assert quick["assessment"]["status"] == full["assessment"]["status"]  # the verdict too
        got, want = _levels(quick), _levels(full)
        assert {m for m, _ in want} - {m for m, _ in got} == {"joint-probability"}  # the hourly check method
        for key, row in got.items():
            for column in ("level_m", "lower_m", "upper_m"):
                if want[key][column] is None:
                    assert row[column] is None
                else:
                    assert row[column] == pytest.approx(want[key][column], abs=batch.POINT_TOLERANCE_M), key
        assert not (tmp_path / "fast" / point.name / "report.html").exists()
        assert not (tmp_path / "fast" / point.name / "figures").exists()
        assert not (tmp_path / "fast" / point.name / "tables").exists()
        assert (tmp_path / "fast" / point.name / "models" / "curves.json").is_file()
        assert any("left out" in note for note in quick["notes"])
        assert any("one clock and one datum" in note for note in quick["notes"])  # gauge checks left out


@pytest.mark.slow  # batches on local dask clusters
def test_points_mode_through_the_batch_and_tasks_spread_over_workers(tmp_path):
    """With 1 worker every task runs on it; with 2 both take tasks, and the numbers do not change."""
    from distributed import LocalCluster

    path = tmp_path / "model.nc"
    write_gridded(path, tidal_points(4, years=3.0))
    blocks = batch.gridded_blocks(path, block_size=1)
    assert blocks[3].chainage == (37.5,)
    frames, workers = [], []
    for n_workers in (1, 2):
        with LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True, dashboard_address="127.0.0.1:0",
                          silence_logs=40) as cluster:
            summary = batch.run_batch(blocks, out_dir=tmp_path / f"w{n_workers}", options=OptionsForTests(),
                                      study=station_study_for_tests,
                                      settings=batch.BatchSettings(mode="points",
                                                                   scheduler=cluster.scheduler_address))
        frames.append(summary.to_frame().drop(columns=["seconds", "report"]))
        workers.append({o["worker"] for o in summary.outcomes})
        assert summary.n_ok == 4 and summary.mode == "points" and summary.order.basis == "chainage"
        assert (tmp_path / f"w{n_workers}" / "summary.html").is_file()
    assert len(workers[0]) == 1 and len(workers[1]) == 2
    pd.testing.assert_frame_equal(frames[0], frames[1])
