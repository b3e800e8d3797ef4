"""``siting weather`` end to end on a small synthetic record, in-process, into tmp_path.

Expected values are properties of the outputs named in the issue (four files, a frequency table
that read_frequency_table accepts, exit code 2 and nothing written on bad input) or counts of
the synthetic record written here.
"""

from __future__ import annotations

import contextlib
import io
import json

import pandas as pd
import pytest
from numpy.testing import assert_allclose

from siting.cli import build_parser, main
from siting.readers.frequency_table import read_frequency_table

OUTPUTS = {"frequency_table.csv", "wind_rose.png", "stability_by_speed.png", "summary.json"}
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def _run(argv: list[str]) -> tuple[int, str, str]:
    """Run the CLI in-process; return (exit code, stdout, stderr)."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        rc = main(argv)
    return rc, out.getvalue(), err.getvalue()


def _record(tmp_path, n_hours: int = 48, bad_line: str | None = None):
    """Two invented days at +01:00 with cloud, ceiling and temperature; hours 20-21 absent."""
    lines = ["time,direction_deg,speed_m_s,cloud_oktas,ceiling_ft,temperature_c"]
    for h in range(n_hours):
        if h in (20, 21):
            continue
        day, hour = divmod(h, 24)
        calm = h % 11 == 0
        direction = 0 if calm else 200 + 10 * (h % 7)  # 0 = the station's calm code
        speed = "0.0" if calm else f"{1.5 + (h % 9) * 0.5:.1f}"
        cloud = h % 9
        ceiling = "2500" if cloud >= 5 else ""
        lines.append(
            f"2025-07-{day + 1:02d}T{hour:02d}:00+01:00,{direction},{speed},{cloud},"
            f"{ceiling},{15 + (hour - 12) / 3:.1f}"
        )
    if bad_line:
        lines.append(bad_line)
    path = tmp_path / "station.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_weather_writes_four_files_and_a_usable_table(tmp_path):
    """Exit 0 and four files; the frequency table loads with read_frequency_table.

    Its hours are the 46 used (48 expected - 2 absent rows); both charts are PNG; summary.json
    holds the summary and the input's SHA-256.
    """
    out = tmp_path / "weather"
    rc, stdout, stderr = _run(
        [
            "weather",
            str(_record(tmp_path)),
            "--lat",
            "52.4",
            "--lon",
            "9.0",
            "--out",
            str(out),
            "--max-missing-percent",
            "5",
        ]
    )
    assert rc == 0, stderr
    assert {p.name for p in out.iterdir()} == OUTPUTS | {".siting-output"}
    classes, table_summary = read_frequency_table(out / "frequency_table.csv")
    assert_allclose(classes.frequency_fraction.sum(), 1.0, rtol=1e-12)
    assert table_summary["sectors"] == 12
    record = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert record["summary"]["hours_used"] == 46 and record["summary"]["hours_missing"] == 2
    assert record["frequency_table"]["rows"] == 12 * 6 * 6
    assert len(record["inputs"]) == 1 and len(record["inputs"][0]["sha256"]) == 64
    assert pd.read_csv(out / "frequency_table.csv")["hours"].sum() == 46
    for name in ("wind_rose.png", "stability_by_speed.png"):
        assert (out / name).read_bytes().startswith(PNG_MAGIC)
    assert "hours used" in stdout and "46 of 48" in stdout
    assert "prevailing wind" in stdout and "from the" in stdout


def test_bad_record_exits_2_and_writes_nothing(tmp_path):
    """A cloud cover of 9 oktas: one error line naming file and line, exit 2, no folder left."""
    out = tmp_path / "weather"
    bad = "2025-07-03T00:00+01:00,200,3.0,9,,15.0"
    rc, _, stderr = _run(
        [
            "weather",
            str(_record(tmp_path, bad_line=bad)),
            "--lat",
            "52",
            "--lon",
            "9",
            "--out",
            str(out),
        ]
    )
    assert rc == 2
    assert stderr.startswith("siting: error: station.csv, line 48: cloud_oktas")
    assert stderr.count("\n") == 1
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["station.csv"]  # no staging folder left


def test_existing_out_dir_needs_overwrite(tmp_path):
    """An existing output folder is left alone without --overwrite (exit 2) and replaced with it."""
    out = tmp_path / "weather"
    out.mkdir()
    (out / ".siting-output").write_text("{}")  # an earlier output folder of siting
    (out / "keep.txt").write_text("earlier result")
    record = _record(tmp_path)
    rc, _, stderr = _run(
        ["weather", str(record), "--lat", "52", "--lon", "9", "--out", str(out), "--quiet"]
    )
    assert rc == 2 and "--overwrite" in stderr
    assert sorted(p.name for p in out.iterdir()) == [".siting-output", "keep.txt"]
    rc, stdout, _ = _run(
        [
            "weather",
            str(record),
            "--lat",
            "52",
            "--lon",
            "9",
            "--out",
            str(out),
            "--quiet",
            "--overwrite",
        ]
    )
    assert rc == 0 and stdout == ""
    assert {p.name for p in out.iterdir()} == OUTPUTS | {".siting-output"}


@pytest.mark.parametrize(
    "option,value,match",
    [
        ("--lat", "91", "--lat must be within -90..90"),
        ("--lon", "-181", "--lon must be within -180..180"),
        ("--sectors", "2", "--sectors must be within 4..360"),
    ],
)
def test_bad_options_exit_2(tmp_path, option, value, match):
    """Site position and sector count out of range: exit 2 with the option named."""
    options = {"--lat": "52", "--lon": "9", "--out": str(tmp_path / "w"), option: value}
    argv = ["weather", str(_record(tmp_path))] + [x for kv in options.items() for x in kv]
    rc, _, stderr = _run(argv)
    assert rc == 2 and match in stderr
    assert not (tmp_path / "w").exists()


def test_naive_times_need_utc_offset(tmp_path):
    """Naive times: an error naming --utc-offset; with it the run succeeds."""
    path = tmp_path / "naive.csv"
    path.write_text(
        "time,direction_deg,speed_m_s,stability\n"
        + "".join(f"2025-01-01T{h:02d}:00,230,4.0,D\n" for h in range(6))
    )
    out = tmp_path / "w"
    rc, _, stderr = _run(["weather", str(path), "--lat", "52", "--lon", "9", "--out", str(out)])
    assert rc == 2 and "--utc-offset" in stderr and not out.exists()
    rc, _, _ = _run(
        [
            "weather",
            str(path),
            "--lat",
            "52",
            "--lon",
            "9",
            "--out",
            str(out),
            "--utc-offset",
            "1",
            "--quiet",
        ]
    )
    assert rc == 0


def test_demo_hourly_flag_is_parsed():
    """`siting demo --hourly` selects the hourly demo (the run itself is timed by hand)."""
    args = build_parser().parse_args(["demo", "--hourly"])
    assert args.hourly is True and args.out_dir is None


@pytest.mark.parametrize(
    "option,value", [("--anemometer-height", "inf"), ("--min-speed", "inf"), ("--min-speed", "nan")]
)
def test_infinite_options_exit_2(tmp_path, option, value):
    """An infinite anemometer height or minimum speed (PC = 0 everywhere) is refused, named."""
    rc, _, stderr = _run(
        [
            "weather",
            str(_record(tmp_path)),
            "--lat",
            "52",
            "--lon",
            "9",
            "--out",
            str(tmp_path / "w"),
            option,
            value,
        ]
    )
    key = {"--anemometer-height": "anemometer_height_m", "--min-speed": "min_wind_speed_m_s"}
    assert rc == 2 and key[option] in stderr and not (tmp_path / "w").exists()


def test_wind_rose_has_the_tables_sectors_and_no_machine_path(tmp_path, monkeypatch):
    """The wind rose is drawn with the frequency table's sectors (--sectors 8: 8 bars per speed
    class, as the table has 8 directions), and summary.json names the record without the
    machine's folders (the issue's check: no absolute path in an output)."""
    from siting.presentation import weather_figures

    drawn = []
    original = weather_figures.wind_rose_figure

    def spy(weather, **options):
        figure = original(weather, **options)
        bars = figure.axes[0].patches
        drawn.append(len({round(bar.get_x() + bar.get_width() / 2, 6) for bar in bars}))
        return figure

    monkeypatch.setattr(weather_figures, "wind_rose_figure", spy)
    out = tmp_path / "weather"
    argv = ["weather", str(_record(tmp_path)), "--lat", "52.4", "--lon", "9.0"]
    rc, _, stderr = _run([*argv, "--out", str(out), "--sectors", "8"])
    assert rc == 0, stderr
    assert pd.read_csv(out / "frequency_table.csv")["direction_deg"].nunique() == 8
    assert drawn == [8]  # bars at 8 distinct directions
    text = (out / "summary.json").read_text(encoding="utf-8")
    assert str(tmp_path) not in text and json.loads(text)["inputs"][0]["path"] == "station.csv"
