"""Several weather years: per-year tables of `siting weather`, and screening by all years or by
the worst single year at each point ([weather] screen_by).

The checks are arithmetic outside the code under test: a long-term mean over two years is the
hour-weighted mean of the two years' means (linearity of the mean, at every grid node); the
worst year at a point is the larger of the two single-year runs at that point, each run made
on its own file; a year's frequency table from the joined record is that year's table made
from its own file. Invented weather throughout.
"""

import json
import warnings

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from siting.cli import main
from siting.errors import WeatherWarning
from siting.runs.screening import screen

X0, Y0 = 500_000.0, 5_800_000.0


def _year_lines(year: int, direction: int, hours: int | None = None) -> list[str]:
    """One invented year (or its first ``hours``): a steady wind from ``direction``, 4 m/s,
    class D, 10 deg C."""
    times = np.arange(f"{year}-01-01T00", f"{year + 1}-01-01T00", dtype="datetime64[h]")
    if hours is not None:
        times = times[:hours]
    return [f"{t}:00Z,{direction},4.0,D,10.0" for t in times]


def _write_record(folder, years: dict[int, int], short: dict[int, int] | None = None):
    """One CSV file per year: {year: direction}; ``short`` = {year: hours} for part-years."""
    names = []
    for year, direction in years.items():
        hours = (short or {}).get(year)
        lines = ["time,direction_deg,speed_m_s,stability,temperature_c"]
        lines += _year_lines(year, direction, hours)
        name = f"wx_{year}.csv"
        (folder / name).write_text("\n".join(lines) + "\n", encoding="utf-8")
        names.append(name)
    return names


def _write_case(folder, names: list[str], screen_by: str):
    import geopandas as gpd
    import shapely

    west = shapely.box(X0 - 620, Y0 - 20, X0 - 580, Y0 + 20)  # downwind of east winds
    east = shapely.box(X0 + 580, Y0 - 20, X0 + 620, Y0 + 20)
    gpd.GeoDataFrame(
        {
            "name": ["West Bog", "East Bog"],
            "habitat": ["raised_bog"] * 2,
            "designation": ["Special Area of Conservation"] * 2,
        },
        geometry=[west, east],
        crs="EPSG:32632",
    ).to_file(folder / "sites.gpkg")
    hourly = ", ".join(f'"{n}"' for n in names)
    path = folder / f"case_{screen_by}_{len(names)}.toml"
    path.write_text(f"""
title = "weather years case"
crs = "EPSG:32632"
[weather]
hourly = [{hourly}]
screen_by = "{screen_by}"
[grid]
spacing_m = 100.0
margin_m = 800.0
[habitats]
file = "sites.gpkg"
[[source]]
id = "H1"
x = {X0}
y = {Y0}
height_m = 6.0
livestock = "finishing_pig"
housing = "fully_slatted"
places = 2000
""")
    return path


@pytest.fixture(scope="module")
def two_years(tmp_path_factory):
    """2024 blows from the east all year, 2025 from the west (invented); the four runs."""
    folder = tmp_path_factory.mktemp("years")
    names = _write_record(folder, {2024: 90, 2025: 270})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", WeatherWarning)
        runs = {
            "worst": screen(_write_case(folder, names, "worst_year"), sensitivity=False),
            "all": screen(_write_case(folder, names, "all_years"), sensitivity=False),
            2024: screen(_write_case(folder, names[:1], "all_years"), sensitivity=False),
            2025: screen(_write_case(folder, names[1:], "all_years"), sensitivity=False),
        }
    return runs


def test_all_years_is_the_hour_weighted_mean_of_the_single_years(two_years):
    """Linearity of the mean: at every grid node the two-year mean is (8784 c2024 + 8760
    c2025) / 17544 (2024 a leap year of 8784 h, 2025 of 8760 h: calendar arithmetic)."""
    c24 = two_years[2024].fields["pc_conc_ug_m3"]
    c25 = two_years[2025].fields["pc_conc_ug_m3"]
    expected = (8784 * c24 + 8760 * c25) / (8784 + 8760)
    assert_allclose(two_years["all"].fields["pc_conc_ug_m3"], expected, rtol=1e-9, atol=1e-15)


def test_worst_year_at_every_node_is_the_larger_single_year(two_years):
    """The worst-year field is the larger of the two single-year runs, node by node, and never
    below the all-years mean (the cautious side)."""
    c24 = two_years[2024].fields["pc_conc_ug_m3"]
    c25 = two_years[2025].fields["pc_conc_ug_m3"]
    worst = two_years["worst"].fields["pc_conc_ug_m3"]
    assert_allclose(worst, np.maximum(c24, c25), rtol=1e-9, atol=1e-15)
    assert (worst >= two_years["all"].fields["pc_conc_ug_m3"] * (1 - 1e-12)).all()


def test_each_site_takes_its_worst_year_and_says_which(two_years):
    """East winds (2024) carry the plume to West Bog, west winds (2025) to East Bog; each
    site's figure is its worse single year's, and sites.csv names the year."""
    worst = two_years["worst"].sites.set_index("name")
    single = {y: two_years[y].sites.set_index("name") for y in (2024, 2025)}
    assert worst.loc["West Bog", "weather_year"] == 2024
    assert worst.loc["East Bog", "weather_year"] == 2025
    for name, year in (("West Bog", 2024), ("East Bog", 2025)):
        assert_allclose(
            worst.loc[name, "judged_dep_max_kg_n_ha_yr"],
            single[year].loc[name, "judged_dep_max_kg_n_ha_yr"],
            rtol=1e-9,
        )
        assert (
            worst.loc[name, "judged_dep_max_kg_n_ha_yr"]
            > two_years["all"].sites.set_index("name").loc[name, "judged_dep_max_kg_n_ha_yr"]
        )
    summary = two_years["worst"].weather_summary
    assert "worst single year" in summary["screened_by"]
    assert summary["worst_year_by_site"] == {"West Bog": 2024, "East Bog": 2025}
    assert "all years together" in two_years["all"].weather_summary["screened_by"]
    assert "weather_year" not in two_years["all"].sites.columns


def test_a_part_year_is_no_candidate_and_one_year_falls_back(tmp_path):
    """A year of 100 h is not a candidate worst year (our rule: at least half a year's hours);
    with one candidate left the run is screened by all years and says so."""
    names = _write_record(tmp_path, {2025: 270, 2026: 90}, short={2026: 100})
    with pytest.warns(WeatherWarning) as caught:
        result = screen(_write_case(tmp_path, names, "worst_year"), with_grid=False)
    messages = " ".join(str(w.message) for w in caught)
    assert "2026 (100 h)" in messages
    assert "screened by all years together" in messages
    assert "weather_year" not in result.sites.columns
    assert "worst_year asked" in result.weather_summary["screened_by"]


def test_siting_weather_writes_each_year_and_all_years(tmp_path):
    """`siting weather` on two station-years: frequency_table.csv of all hours, one table per
    year equal to that year's own run, and years.csv with each year's hours (calendar
    arithmetic: 8784 h in 2024, 8760 h in 2025)."""
    names = _write_record(tmp_path, {2024: 90, 2025: 270})
    paths = [str(tmp_path / n) for n in names]
    common = ["--lat", "52.0", "--lon", "9.0", "--quiet"]
    assert main(["weather", *paths, "--out", str(tmp_path / "both"), *common]) == 0
    assert main(["weather", paths[1], "--out", str(tmp_path / "only2025"), *common]) == 0
    both, only = tmp_path / "both", tmp_path / "only2025"
    pd.testing.assert_frame_equal(
        pd.read_csv(both / "by_year" / "frequency_table_2025.csv"),
        pd.read_csv(only / "frequency_table.csv"),
    )
    years = pd.read_csv(both / "years.csv")
    assert years["year"].tolist() == [2024, 2025]
    assert years["hours_used"].tolist() == [8784, 8760]
    table = pd.read_csv(both / "frequency_table.csv")
    assert table["frequency"].sum() == pytest.approx(1.0, abs=1e-12)
    # all years: east winds 8784 h of 17544 (the sectors' centres 90 and 270 deg)
    by_direction = table.groupby("direction_deg")["frequency"].sum()
    assert by_direction.loc[90] == pytest.approx(8784 / 17544, rel=1e-9)
    record = json.loads((both / "summary.json").read_text(encoding="utf-8"))
    assert record["frequency_table"]["by_year"] == [
        "by_year/frequency_table_2024.csv",
        "by_year/frequency_table_2025.csv",
    ]
    assert not (only / "by_year").exists()  # one year: no per-year tables


def test_verify_reads_other_years_by_the_same_readers(tmp_path):
    """verify --weather: an ISD-Lite or NetCDF file, siting's hourly CSV and (with the
    scenario's column map) a foreign CSV are hourly records; a frequency table is a table."""
    import xarray as xr

    from siting.runs.sensitivity import _is_hourly

    isd = tmp_path / "station-2024"
    line = "2024 01 01 00    50 -9999 -9999   270    40     4 -9999 -9999"  # ISD-Lite layout
    isd.write_text(line + "\n", encoding="ascii")
    nc = tmp_path / "grid.nc"
    xr.Dataset({"u10": ("time", [1.0])}, coords={"time": [0]}).to_netcdf(nc, engine="h5netcdf")
    own = tmp_path / "own.csv"
    own.write_text("time,direction_deg,speed_m_s,stability\n", encoding="utf-8")
    table = tmp_path / "table.csv"
    table.write_text("direction_deg,speed_m_s,stability,frequency\n", encoding="utf-8")
    foreign = tmp_path / "foreign.csv"
    foreign.write_text("DATE;DD;FF;N\n", encoding="utf-8")
    assert _is_hourly(isd, mapped=False)
    assert _is_hourly(nc, mapped=False)
    assert _is_hourly(own, mapped=False)
    assert not _is_hourly(table, mapped=True)
    assert _is_hourly(foreign, mapped=True)
    assert not _is_hourly(foreign, mapped=False)  # then read as a table, which refuses it


def test_a_scenario_reads_a_mapped_csv_as_its_own_layout(tmp_path):
    """[weather] columns and units: the same hours written as a national-style export (knots,
    tens of degrees, local time UTC+1, semicolons) screen to the same figures as siting's own
    CSV (1 knot = 1852/3600 m/s exactly; 4 m/s written in knots to 12 digits)."""
    names = _write_record(tmp_path, {2025: 270})
    own = screen(_write_case(tmp_path, names, "all_years"), with_grid=False)
    times = np.arange("2025-01-01T00", "2026-01-01T00", dtype="datetime64[h]")
    local = times + np.timedelta64(1, "h")
    knots = f"{4.0 / (1852 / 3600):.12g}".replace(".", ",")
    lines = ["DATUM;STUNDE;DD;FF;KLASSE"]
    lines += [f"{str(t)[:10]};{str(t)[11:13]};27;{knots};D" for t in local]
    (tmp_path / "export.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    case = _write_case(tmp_path, ["export.csv"], "all_years")
    text = case.read_text(encoding="utf-8").replace(
        'screen_by = "all_years"',
        'screen_by = "all_years"\n'
        'columns = { time = "DATUM+STUNDE", direction = "DD", speed = "FF", '
        'stability = "KLASSE" }\n'
        'speed_unit = "knots"\ndirection_unit = "tens"\ntime_format = "%Y-%m-%d %H"\n'
        "utc_offset_h = 1.0",
    )
    case.write_text(text, encoding="utf-8")
    mapped = screen(case, with_grid=False)
    assert mapped.weather_summary["format"] == "csv"
    assert "column map" in mapped.weather_summary["sources"]["export.csv"]["layout"]
    assert_allclose(
        mapped.sites["judged_dep_max_kg_n_ha_yr"],
        own.sites["judged_dep_max_kg_n_ha_yr"],
        rtol=1e-9,
    )


def test_siting_weather_reads_a_mapped_export_and_refuses_a_bad_map(tmp_path, capsys):
    """`siting weather --columns ... --speed-unit knots --direction-unit tens`: the hours of a
    foreign export give siting's own table; a map without speed exits 2 naming the option."""
    names = _write_record(tmp_path, {2025: 270})
    times = np.arange("2025-01-01T00", "2026-01-01T00", dtype="datetime64[h]")
    knots = f"{4.0 / (1852 / 3600):.12g}"  # 1 knot = 1852/3600 m/s (exact definition)
    lines = ["when,dd,ff,cls"] + [f"{t}:00Z,27,{knots},D" for t in times]
    (tmp_path / "export.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    common = ["--lat", "52.0", "--lon", "9.0", "--quiet"]
    mapping = "time=when,direction=dd,speed=ff,stability=cls"
    units = ["--speed-unit", "knots", "--direction-unit", "tens"]
    assert main(["weather", str(tmp_path / names[0]), "--out", str(tmp_path / "own"), *common]) == 0
    code = main(
        ["weather", str(tmp_path / "export.csv"), "--out", str(tmp_path / "mapped")]
        + ["--columns", mapping, *units, *common]
    )
    assert code == 0
    pd.testing.assert_frame_equal(
        pd.read_csv(tmp_path / "mapped" / "frequency_table.csv"),
        pd.read_csv(tmp_path / "own" / "frequency_table.csv"),
    )
    capsys.readouterr()
    code = main(
        ["weather", str(tmp_path / "export.csv"), "--out", str(tmp_path / "bad")]
        + ["--columns", "time=when,direction=dd,stability=cls", *common]
    )
    assert code == 2
    assert "--columns" in capsys.readouterr().err
    assert not (tmp_path / "bad").exists()


def test_an_hour_without_the_temperature_seasonal_emission_needs_is_a_missing_hour(tmp_path):
    """[seasonal] temperature-dependent emission needs every hour's temperature: an hour
    without one (a station's missing code) is left out and counted, never filled (the
    missing-hour rule); without [seasonal] the same hour is used."""
    names = _write_record(tmp_path, {2025: 270})
    path = tmp_path / names[0]
    lines = path.read_text(encoding="utf-8").splitlines()
    lines[100] = lines[100].rsplit(",", 1)[0] + ","  # hour 99 loses its temperature
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    case = _write_case(tmp_path, names, "all_years")
    plain = screen(case, with_grid=False)
    case.write_text(
        case.read_text(encoding="utf-8") + "[seasonal]\ntemperature_dependent_emission = true\n",
        encoding="utf-8",
    )
    seasonal = screen(case, with_grid=False)
    assert plain.weather_summary["hours_missing"] == 0
    assert seasonal.weather_summary["hours_missing"] == 1
    assert seasonal.weather_summary["hours_used"] == 8759  # 8760 h in 2025, less one
    assert seasonal.weather_summary["temperature_required"] is True
