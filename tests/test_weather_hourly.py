"""Hourly weather records: time and offsets, missing hours and gaps, the calm rule, Turner
stability, frequency tables made from hours, bad files."""

import json

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from siting.errors import InputError, collect_warnings
from siting.physics.plume import STABILITY_CLASSES
from siting.readers.frequency_table import read_frequency_table
from siting.readers.hourly_record import read_hourly_record
from siting.readers.hourly_table import (
    compass_words,
    frequency_table_from_hourly,
    hours_by_sector,
)
from siting.readers.resources import demo_dir

LAT, LON = 52.0, 0.0  # a site at 52 N on the Greenwich meridian (solar time ~ UTC)
HOURLY_HEADER = "time,direction_deg,speed_m_s,stability"


def _hourly(tmp_path, rows, header=HOURLY_HEADER, name="record.csv"):
    path = tmp_path / name
    path.write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return path


def _stamp(hour: int, suffix: str = "Z", day: str = "2025-03-01") -> str:
    """ISO time of hour ``hour`` after midnight of ``day`` (hours may run past 23)."""
    t = np.datetime64(f"{day}T00", "h") + np.timedelta64(hour, "h")
    return f"{t}:00{suffix}"


def test_frequency_table_from_hourly_counts_and_reads_back(tmp_path):
    """A table made from hours keeps the record's counts, sums to 1 and reads back.

    Cross-check: read_frequency_table gives the record's mean speed and class shares.
    """
    rows = [
        f"{_stamp(0)},10,2.0,D",
        f"{_stamp(1)},350,2.5,D",
        f"{_stamp(2)},180,6.0,D",
        f"{_stamp(3)},190,7.0,E",
        f"{_stamp(4)},90,12.0,C",
        f"{_stamp(5)},270,1.2,F",
    ]
    weather, summary = read_hourly_record(_hourly(tmp_path, rows), LAT, LON)
    table = frequency_table_from_hourly(weather, n_sectors=12)
    assert len(table) == 12 * 6 * 6  # every sector x speed class x class A-F (complete table)
    assert table["hours"].sum() == 6 and table["frequency"].sum() == pytest.approx(1.0)

    def hours(direction, stability, speed_class):
        speeds = sorted(table["speed_m_s"].unique())
        pick = (
            (table["direction_deg"] == direction)
            & (table["stability"] == stability)
            & (table["speed_m_s"] == speeds[speed_class])
        )
        return int(table.loc[pick, "hours"].sum())

    # by hand: 10 and 350 deg -> sector 0 (+-15 deg), class 1.5-3 (index 1); 180 and 190 ->
    # sector 180, class 5-8 (index 3); 12 m/s -> open class >= 11 (index 5); 1.2 -> < 1.5
    assert hours(0, "D", 1) == 2 and hours(180, "D", 3) == 1 and hours(180, "E", 3) == 1
    assert hours(90, "C", 5) == 1 and hours(270, "F", 0) == 1
    speeds = sorted(table["speed_m_s"].unique())
    assert speeds[1] == pytest.approx(2.25)  # analytic: mean of 2.0 and 2.5 in class 1.5-3
    assert speeds[3] == pytest.approx(6.5)  # analytic: mean of 6.0 and 7.0 in class 5-8
    assert speeds[2] == pytest.approx(4.0)  # empty class 3-5: its mid-point (documented rule)

    path = tmp_path / "table.csv"
    table.to_csv(path, index=False)
    with collect_warnings(reissue=False) as found:
        classes, table_summary = read_frequency_table(path)
    warnings = found.messages
    assert warnings == [] and table_summary["frequencies_given_as"] == "fractions"
    assert_allclose(classes.frequency_fraction.sum(), 1.0, rtol=1e-12)
    # cross-check: the table's mean speed equals the record's (class means keep the sum)
    assert table_summary["mean_speed_m_s"] == pytest.approx(summary["mean_speed_m_s"], rel=1e-12)
    for c in STABILITY_CLASSES:
        assert table_summary["stability_share"][c] == pytest.approx(summary["stability_share"][c])


def test_missing_hours_counted_and_gaps_listed(tmp_path):
    """Absent rows (3 h) and an empty value (1 h) are missing, never filled; gaps longest first."""
    present = [h for h in range(24) if h not in (5, 6, 7)]  # hours 5-7 absent
    rows = [f"{_stamp(h)},200,{'' if h == 12 else '4.0'},D" for h in present]  # 12 empty
    with collect_warnings(reissue=False) as found:
        weather, summary = read_hourly_record(
            _hourly(tmp_path, rows), LAT, LON, max_missing_percent=20.0
        )
    warnings = found.messages
    assert summary["hours_expected"] == 24  # first to last time, hourly (analytic)
    assert summary["hours_used"] == weather.n_hours == 20
    assert summary["hours_missing"] == 4
    assert summary["missing_percent"] == pytest.approx(100 * 4 / 24)
    assert summary["gaps"] == [
        {"start_utc": "2025-03-01T05:00Z", "end_utc": "2025-03-01T07:00Z", "hours": 3},
        {"start_utc": "2025-03-01T12:00Z", "end_utc": "2025-03-01T12:00Z", "hours": 1},
    ]
    assert np.datetime64("2025-03-01T06:00") not in weather.time_utc  # not filled
    assert any("less than a year" in w for w in warnings)


def test_calm_rule_applied_and_reported(tmp_path):
    """The calm rule of weather_hourly.py's docstring is applied hour by hour and reported.

    Calms keep a recorded direction, else take the last non-calm hour's; calms and light
    winds are raised to the floor speed.
    """
    rows = [
        f"{_stamp(0)},0,0.0,F",  # calm before any non-calm hour: takes hour 2's 200
        f"{_stamp(1)},,0.3,F",  # calm, empty direction: also 200
        f"{_stamp(2)},200,3.0,D",
        f"{_stamp(3)},0,0.0,F",  # calm coded 0: last non-calm = 200
        f"{_stamp(4)},90,0.2,F",  # calm with its own direction: kept
        f"{_stamp(5)},250,0.7,E",  # light, not calm: raised, direction kept
        f"{_stamp(6)},,0.0,F",  # calm, empty: last non-calm is hour 5 (250)
        f"{_stamp(7)},360,5.0,D",
    ]  # 360 = north, stored as 0
    weather, summary = read_hourly_record(
        _hourly(tmp_path, rows), LAT, LON, calm_threshold_m_s=0.5, min_wind_speed_m_s=1.0
    )
    assert_allclose(weather.direction_deg, [200, 200, 200, 200, 90, 250, 250, 0])
    assert_allclose(weather.speed_m_s, [1.0, 1.0, 3.0, 1.0, 1.0, 1.0, 1.0, 5.0])
    assert summary["calm_hours"] == 5
    assert summary["calm_percent"] == pytest.approx(100 * 5 / 8)
    assert summary["calm_direction_filled_hours"] == 4
    assert summary["raised_to_min_speed_percent"] == pytest.approx(100 * 1 / 8)
    assert "last non-calm hour" in summary["calm_rule"]


def test_many_calms_warn(tmp_path):
    """More than 10 % calms is legal but doubtful: a warning names the share."""
    rows = [f"{_stamp(h)},200,{0.0 if h % 3 == 0 else 4.0},D" for h in range(12)]
    with collect_warnings(reissue=False) as found:
        _, summary = read_hourly_record(_hourly(tmp_path, rows), LAT, LON)
    warnings = found.messages
    assert summary["calm_percent"] == pytest.approx(100 * 4 / 12)
    assert any("33.3 % of the hours used are calm" in w for w in warnings)


def test_iso_offset_and_naive_plus_offset_give_the_same_utc(tmp_path):
    """+01:00 in the file, naive times with utc_offset_h = 1 and Z times agree in UTC.

    Analytic: 00:00+01:00 is 23:00Z the day before.
    """
    local = [f"{_stamp(h, '')},200,4.0,D" for h in range(3)]
    with_offset = [f"{_stamp(h, '+01:00')},200,4.0,D" for h in range(3)]
    as_utc = [f"{_stamp(h - 1, 'Z')},200,4.0,D" for h in range(3)]
    a, sa = read_hourly_record(_hourly(tmp_path, with_offset, name="a.csv"), LAT, LON)
    b, _ = read_hourly_record(_hourly(tmp_path, local, name="b.csv"), LAT, LON, utc_offset_h=1.0)
    c, _ = read_hourly_record(_hourly(tmp_path, as_utc, name="c.csv"), LAT, LON)
    assert (a.time_utc == b.time_utc).all() and (a.time_utc == c.time_utc).all()
    assert a.time_utc[0] == np.datetime64("2025-02-28T23:00:00")
    assert sa["first_time_utc"] == "2025-02-28T23:00Z"


def test_offset_with_impossible_minutes_is_refused(tmp_path):
    """A UTC offset "+01:99" is refused naming the line, not read as 2 h 39 min."""
    path = _hourly(tmp_path, [f"{_stamp(h, '+01:99')},200,4.0,D" for h in range(3)])
    with pytest.raises(InputError, match=r"record\.csv, line 2: UTC offset \+01:99 has minutes"):
        read_hourly_record(path, LAT, LON)


def test_naive_times_without_offset_are_refused(tmp_path):
    """Naive times need utc_offset_h: the error names the option, the file and the line."""
    path = _hourly(tmp_path, [f"{_stamp(h, '')},200,4.0,D" for h in range(3)])
    with pytest.raises(InputError, match=r"record\.csv, line 2: .*utc_offset_h"):
        read_hourly_record(path, LAT, LON)


def test_clear_summer_noon_is_unstable_and_overcast_is_neutral(tmp_path):
    """Turner's method at 52 N: clear midsummer noon, 2 m/s -> A or B; overcast -> D.

    REFERENCES 2e ([EPA2000] Tables 6-4, 6-5): sun ~61 deg -> insolation class 4, 2 m/s = 4 kt
    -> A; 8 oktas with a 3000 ft ceiling (< 7000 ft) -> NRI 0 -> D at any speed.
    """
    rows = ["2025-06-21T12:00Z,200,2.0,0,", "2025-06-21T13:00Z,200,2.0,8,3000"]
    weather, summary = read_hourly_record(
        _hourly(tmp_path, rows, header="time,direction_deg,speed_m_s,cloud_oktas,ceiling_ft"),
        LAT,
        LON,
    )
    assert STABILITY_CLASSES[weather.stability_index[0]] in ("A", "B")
    assert STABILITY_CLASSES[weather.stability_index[1]] == "D"
    assert summary["stability_method"].startswith("Turner's method")


def test_given_stability_is_used_as_is(tmp_path):
    """A stability column is taken as given (lower case accepted), not recomputed."""
    rows = ["2025-06-21T12:00Z,200,2.0,f", "2025-06-21T13:00Z,200,9.0,A"]
    weather, summary = read_hourly_record(_hourly(tmp_path, rows), LAT, LON)
    assert [STABILITY_CLASSES[i] for i in weather.stability_index] == ["F", "A"]
    assert summary["stability_method"] == "given"
    assert summary["stability_share"]["F"] == pytest.approx(0.5)


def test_several_files_join_in_time_order_and_must_not_overlap(tmp_path):
    """Files join in time order whatever the order given; overlapping files are refused.

    The hour between the two files counts as missing; the overlap error names both files.
    """
    late = _hourly(tmp_path, [f"{_stamp(h)},200,4.0,D" for h in (3, 4)], name="late.csv")
    early = _hourly(tmp_path, [f"{_stamp(h)},200,4.0,D" for h in (0, 1)], name="early.csv")
    weather, summary = read_hourly_record([late, early], LAT, LON, max_missing_percent=20.0)
    assert summary["files"] == ["early.csv", "late.csv"]
    assert weather.n_hours == 4 and summary["hours_missing"] == 1  # hour 2
    overlap = _hourly(tmp_path, [f"{_stamp(h)},200,4.0,D" for h in (1, 2)], name="overlap.csv")
    with pytest.raises(InputError, match=r"overlap\.csv, line 2: .*overlaps early\.csv"):
        read_hourly_record([early, overlap], LAT, LON)


def test_temperature_summary(tmp_path):
    """temperature_c is carried hour by hour; min/mean/max over the hours used."""
    rows = [f"{_stamp(h)},200,4.0,D,{t}" for h, t in enumerate(("1.5", "", "4.5"))]
    weather, summary = read_hourly_record(
        _hourly(tmp_path, rows, header=HOURLY_HEADER + ",temperature_c"), LAT, LON
    )
    assert_allclose(weather.temperature_c, [1.5, np.nan, 4.5])
    assert summary["temperature_c"] == {"min": 1.5, "mean": 3.0, "max": 4.5, "hours_without": 1}


def _day(n=24, direction="200", speed="4.0", extra=""):
    return [f"{_stamp(h)},{direction},{speed},D{extra}" for h in range(n)]


@pytest.mark.parametrize(
    "header,rows,match",
    [
        (
            "time,direction_deg,speed,stability",
            _day(3),
            r"record\.csv, line 1: missing column\(s\) speed_m_s",
        ),
        (
            "time,direction_deg,speed_m_s",
            [f"{_stamp(h)},200,4.0" for h in range(3)],
            r"missing column\(s\) stability or cloud_oktas",
        ),
        (
            "time,direction_deg,speed_m_s,stability,cloud_oktas",
            _day(3, extra=",4"),
            r"line 1: give either a stability column or a cloud_oktas column",
        ),
        (
            HOURLY_HEADER,
            _day(2) + [f"{_stamp(2)},400,4.0,D"],
            r"record\.csv, line 4: direction_deg must be within 0\.\.360.*got '400'",
        ),
        (
            HOURLY_HEADER,
            _day(2) + [f"{_stamp(3)},200,-1,D"],
            r"line 4: speed_m_s must be >= 0, got '-1'",
        ),
        (
            HOURLY_HEADER,
            [_stamp(0) + ",200,4,D", _stamp(2) + ",200,4,D", _stamp(1) + ",200,4,D"],
            r"record\.csv, line 4: time '2025-03-01T01:00Z' is earlier than line 3",
        ),
        (
            HOURLY_HEADER,
            [_stamp(0) + ",200,4,D", _stamp(0) + ",200,4,D"],
            r"record\.csv, line 3: time '2025-03-01T00:00Z' repeats the time of line 2",
        ),
        (
            HOURLY_HEADER,
            [_stamp(0) + ",200,4,D", "2025-03-01T01:30Z,200,4,D"],
            r"line 3: time '2025-03-01T01:30Z' is not on a whole hour",
        ),
        (
            HOURLY_HEADER,
            [_stamp(0) + ",200,4,D", _stamp(1, "") + ",200,4,D"],
            r"record\.csv: times mix UTC offsets and naive times: line 2",
        ),
        (
            HOURLY_HEADER,
            [_stamp(0) + ",200,4,D", "01/03/2025 01:00,200,4,D"],
            r"line 3: time must be ISO 8601.*'01/03/2025 01:00'",
        ),
        (
            HOURLY_HEADER,
            [_stamp(0) + ",200,4,D", _stamp(1) + ",200,4,G"],
            r"line 3: stability must be a Pasquill class A-F, got 'G'",
        ),
        (
            HOURLY_HEADER,
            [_stamp(0) + ",200,4,D", _stamp(1) + ",200,fast,D"],
            r"line 3: speed_m_s must be a number, got 'fast'",
        ),
        (
            "time,direction_deg,speed_m_s,cloud_oktas",
            [_stamp(0) + ",200,4,3", _stamp(1) + ",200,4,9"],
            r"record\.csv, line 3: cloud_oktas must be whole oktas 0\.\.8.*got '9'",
        ),
        (
            HOURLY_HEADER,
            [_stamp(0) + ",200,4,D", _stamp(30) + ",200,4,D"],
            (
                r"record\.csv: 93\.5 % of the 31 expected hours are missing \(29 h\), more than "
                r"max_missing_percent = 10 %; the longest gap is 29 h from 2025-03-01T01:00Z"
            ),
        ),
    ],
)
def test_bad_hourly_records_are_refused(tmp_path, header, rows, match):
    """Each bad record is an InputError naming the file and the line, or the missing share.

    Wrong columns, out-of-range values, disordered or duplicate times, too many missing hours;
    lines count the header as line 1.
    """
    with pytest.raises(InputError, match=match):
        read_hourly_record(_hourly(tmp_path, rows, header=header), LAT, LON)


def test_missing_share_limit_is_a_setting(tmp_path):
    """The same record passes when max_missing_percent allows its share (4 of 24 h = 16.7 %)."""
    rows = [f"{_stamp(h)},200,4.0,D" for h in range(24) if h not in (3, 4, 5, 6)]
    with pytest.raises(InputError, match="16.7 % of the 24 expected hours"):
        read_hourly_record(_hourly(tmp_path, rows), LAT, LON, max_missing_percent=10.0)
    _, summary = read_hourly_record(_hourly(tmp_path, rows), LAT, LON, max_missing_percent=20.0)
    assert summary["hours_missing"] == 4


def test_bad_site_position_is_refused(tmp_path):
    """Latitude outside -90..90 is an InputError naming the key."""
    with pytest.raises(InputError, match="latitude_deg must be within -90..90"):
        read_hourly_record(_hourly(tmp_path, _day(3)), 95.0, LON)


def test_sectors_from_stepped_directions_are_even():
    """10 deg directions spread over their step fill 16 sectors evenly.

    Analytic: one hour every 10 deg is a uniform circle, 36/16 h per sector; hard binning
    alternates 2 and 3 h.
    """
    directions = np.arange(0, 360, 10.0)
    assert_allclose(hours_by_sector(directions, 16), np.full(16, 36 / 16), rtol=1e-12)
    raw = hours_by_sector(directions, 16, step_deg=0)  # no spreading: counts per sector
    assert raw.sum() == 36 and set(raw) == {2.0, 3.0}


def test_prevailing_direction_in_words():
    """225 deg is 'from the south-west' on the 16-point compass (definition)."""
    assert compass_words(225.0) == "from the south-west (225°)"
    assert compass_words(360.0) == "from the north (0°)"
    assert compass_words(80.0).startswith("from the east ")


def test_demo_hourly_record_reads_as_described():
    """The invented demo record reads as data_demo/README.md describes it.

    One year, two gaps of 7 and 3 h, about 3 % calms, prevailing south-westerly (regression on
    the output of tools/make_demo.py, seed 20240612, made with this change).
    """
    with collect_warnings(reissue=False) as found:
        weather, summary = read_hourly_record(demo_dir() / "hourly_weather.csv", 52.4, 9.0)
    warnings = found.messages
    assert summary["hours_expected"] == 8760 and summary["hours_missing"] == 10
    assert [g["hours"] for g in summary["gaps"]] == [7, 3]
    assert 2.0 < summary["calm_percent"] < 4.0
    assert summary["prevailing_from_words"] == "from the south-west (225°)"
    assert summary["years_covered"] == [2025]
    assert np.isfinite(weather.temperature_c).all()
    assert warnings == []
    json.dumps(summary)  # the summary is plain JSON (summary.json, run.json)
    table = frequency_table_from_hourly(weather)
    assert table["hours"].sum() == weather.n_hours
    assert isinstance(table, pd.DataFrame)


def test_direction_step_inferred_from_a_ten_degree_record(tmp_path):
    """Directions all multiples of 10 (not of 22.5): step 10 inferred, the plume spread over it."""
    rows = [f"{_stamp(h)},{(h * 70) % 360 or 10},4.0,D" for h in range(24)]
    weather, summary = read_hourly_record(_hourly(tmp_path, rows), LAT, LON)
    # by definition of direction_step_deg(): 70 h mod 360 are multiples of 10, 70 is not of 22.5
    assert summary["direction_step_deg"] == 10.0
    assert summary["direction_spread_deg"] == 10.0 and weather.direction_step_deg == 10.0
    assert summary["direction_rule"].startswith(
        "each hour's plume is spread evenly over the 10-degree interval its direction was "
        "reported in"
    )
    json.dumps(summary)


def test_fine_record_is_used_as_exact(tmp_path):
    """Whole-degree directions: step 1 inferred, not spread (documented rule: <= 1 deg is exact)."""
    rows = [f"{_stamp(h)},{200 + h},4.0,D" for h in range(24)]
    weather, summary = read_hourly_record(_hourly(tmp_path, rows), LAT, LON)
    assert summary["direction_step_deg"] == 1.0  # by definition of direction_step_deg()
    assert summary["direction_spread_deg"] == 0.0 and weather.direction_step_deg == 0.0
    rows = [f"{_stamp(h)},{200.3 + h},4.0,D" for h in range(24)]  # no step at all
    weather, summary = read_hourly_record(_hourly(tmp_path, rows), LAT, LON)
    assert summary["direction_step_deg"] == 0.0 and weather.direction_step_deg == 0.0


def test_given_direction_step_is_honoured(tmp_path):
    """A given step overrides the inferred one, 0 included; one the directions miss warns."""
    rows = [f"{_stamp(h)},{(h * 70) % 360 or 10},4.0,D" for h in range(24)]
    path = _hourly(tmp_path, rows)
    with collect_warnings(reissue=False) as found:
        weather, summary = read_hourly_record(path, LAT, LON, direction_step_deg=0)
    warnings = found.messages
    assert weather.direction_step_deg == 0.0 and summary["direction_spread_deg"] == 0.0
    assert "used as exact" in summary["direction_rule"]
    assert not any("direction_step_deg" in w for w in warnings)
    with collect_warnings(reissue=False) as found:
        weather, summary = read_hourly_record(path, LAT, LON, direction_step_deg=5.0)
    warnings = found.messages
    assert weather.direction_step_deg == 5.0 and summary["direction_step_deg"] == 5.0
    assert "5-degree interval" in summary["direction_rule"]
    assert not any("direction_step_deg" in w for w in warnings)  # 10 deg data are in 5 deg steps
    with collect_warnings(reissue=False) as found:
        _, _ = read_hourly_record(path, LAT, LON, direction_step_deg=20.0)
    warnings = found.messages
    assert any("not every direction is a multiple of 20" in w for w in warnings)


@pytest.mark.parametrize("step", [-1.0, 45.5, float("nan"), "ten"])
def test_bad_direction_step_is_refused(tmp_path, step):
    """A step outside 0..45 deg (or not a number) is an InputError naming the scenario key."""
    with pytest.raises(InputError, match=r"weather\.direction_step_deg must be within 0\.\.45"):
        read_hourly_record(_hourly(tmp_path, _day(3)), LAT, LON, direction_step_deg=step)
