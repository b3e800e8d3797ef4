"""Weather input: frequency tables (normalisation, sectors, checks)."""

import pytest
from numpy.testing import assert_allclose

from siting.errors import InputError, collect_warnings
from siting.readers.frequency_table import read_frequency_table
from siting.readers.resources import demo_dir


def _write(tmp_path, rows, header="direction_deg,speed_m_s,stability,frequency"):
    path = tmp_path / "w.csv"
    path.write_text(header + "\n" + "\n".join(rows) + "\n")
    return path


def test_demo_table_sums_to_one_and_keeps_counts():
    """The demo table's frequencies sum to 1 and its sectors are 30 deg apart (invented demo)."""
    with collect_warnings(reissue=False) as found:
        weather, summary = read_frequency_table(demo_dir() / "weather_table.csv")
    warnings = found.messages
    assert_allclose(weather.frequency_fraction.sum(), 1.0, rtol=1e-12)
    assert weather.sector_width_deg == 30.0 and summary["sectors"] == 12
    assert warnings == []


def test_counts_are_normalised_and_360_is_north(tmp_path):
    """Counts become fractions; 360 deg is the same sector as 0 deg (compass convention)."""
    rows = ["360,3,D,2", "90,3,D,1", "180,3,e,1", "270,5,D,4"]
    weather, summary = read_frequency_table(_write(tmp_path, rows))
    assert_allclose(weather.sector_centres_deg, [0, 90, 180, 270])
    assert_allclose(weather.frequency_fraction[0, 0, 3], 2 / 8, rtol=1e-12)
    assert_allclose(weather.frequency_fraction[2, 0, 4], 1 / 8, rtol=1e-12)  # lower-case class
    assert summary["frequencies_given_as"] == "counts (normalised)"


def test_calm_speeds_raised_with_warning(tmp_path):
    """Class speeds below the floor are raised to it and the share is reported."""
    rows = ["0,0.5,F,1", "90,3,D,1", "180,3,D,1", "270,3,D,1"]
    with collect_warnings(reissue=False) as found:
        weather, summary = read_frequency_table(_write(tmp_path, rows), min_wind_speed_m_s=1.0)
    warnings = found.messages
    assert weather.speeds_m_s.min() == 1.0
    assert summary["share_raised_to_min_speed"] == pytest.approx(0.25)
    assert any("raised" in w for w in warnings)


@pytest.mark.parametrize(
    "rows,header,match",
    [
        (["0,3,D,1", "100,3,D,1", "180,3,D,1", "270,3,D,1"], None, "evenly spaced"),
        (["0,3,G,1", "90,3,D,1", "180,3,D,1", "270,3,D,1"], None, "stability"),
        (["0,3,D,1"], "direction_deg,speed,stability,frequency", "speed_m_s"),
        (["0,3,D,-1", "90,3,D,1", "180,3,D,1", "270,3,D,1"], None, "frequency must be >= 0"),
        (["400,3,D,1", "90,3,D,1", "180,3,D,1", "270,3,D,1"], None, "0..360"),
        (["0,3,D,x", "90,3,D,1", "180,3,D,1", "270,3,D,1"], None, "frequency must be a number"),
    ],
)
def test_bad_tables_are_refused(tmp_path, rows, header, match):
    """Uneven sectors, unknown class, missing column, negative or non-numeric values: clear errors."""
    path = _write(tmp_path, rows, header or "direction_deg,speed_m_s,stability,frequency")
    with pytest.raises(InputError, match=match):
        read_frequency_table(path)


def _table(tmp_path, rows):
    path = tmp_path / "t.csv"
    path.write_text("direction_deg,speed_m_s,stability,frequency\n" + rows, encoding="utf-8")
    return path


@pytest.mark.parametrize(
    "rows, match",
    [
        ("".join(f"{90 * k},5,D,0.125\n" for k in range(4)), "sum to 0.5"),
        ("".join(f"{90 * k},5,D,1e308\n" for k in range(4)), "overflow"),
        (
            "".join(f"{90 * k},inf,D,0.25\n" for k in range(4)),
            "line 2: speed_m_s must be a finite number, got .inf.",
        ),
        (
            "".join(f"{90 * k},5,D,nan\n" for k in range(4)),
            "line 2: frequency must be a finite number, got .nan.",
        ),
    ],
    ids=["fractions summing to 0.5", "1e308 frequencies", "infinite speed", "NaN frequency"],
)
def test_frequencies_that_would_mislead_are_refused(tmp_path, rows, match):
    """Fractions must sum to 1 within 0.01 (or be whole counts); every number finite: a table
    that would silently give a wrong PC stops with the file and the value named."""
    with pytest.raises(InputError, match=match):
        read_frequency_table(_table(tmp_path, rows))


def test_counts_are_normalised_and_said(tmp_path):
    """Whole-number counts (hours) are normalised to fractions; the summary says so."""
    weather, summary = read_frequency_table(
        _table(tmp_path, "".join(f"{90 * k},5,D,{100 * (k + 1)}\n" for k in range(4)))
    )
    assert summary["frequencies_given_as"] == "counts (normalised)"
    assert abs(weather.frequency_fraction.sum() - 1.0) < 1e-12  # normalised (definition)


def test_a_bad_row_is_named_by_its_line_in_the_file(tmp_path):
    """Comment and blank lines before a bad row: the message names the row's own line in the
    file (line 6 here, counted by hand), not its position among the rows."""
    path = tmp_path / "t.csv"
    path.write_text(
        "# invented table\ndirection_deg,speed_m_s,stability,frequency\n"
        "0,5,D,0.25\n\n# the next row is bad\n90,5,G,0.25\n"
        "180,5,D,0.25\n270,5,D,0.25\n",
        encoding="utf-8",
    )
    with pytest.raises(InputError, match=r"t.csv, line 6: stability must be one of A-F"):
        read_frequency_table(path)
