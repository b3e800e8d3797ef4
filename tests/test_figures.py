"""Tests of the figure modules (siting.presentation.figures, weather_figures, figure_parts): the
figures draw into a new Figure or a caller's Axes and render to PNG, hostile names included."""

from __future__ import annotations

import io
import subprocess
import sys
import textwrap

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from numpy.testing import assert_allclose
from PIL import Image
from shapely.geometry import MultiPolygon, Point, Polygon, box
from synthetic import hostile_sites

from siting.dispersion.hourly import HourlyWeather
from siting.dispersion.inputs import WeatherClasses
from siting.errors import InputError
from siting.presentation.figures import (
    MAX_LABELLED_SITES,
    _site_outlines,
    deposition_figure,
    figure_png,
    pc_vs_distance_figure,
)
from siting.presentation.formats import most_affected_order
from siting.presentation.weather_figures import (
    _table_rose_percent,
    stability_by_speed_figure,
    wind_rose_figure,
    wind_rose_from_table_figure,
)

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"

#: Words of the note a figure carries when it names only some sites (figure_parts.labels_note).
NOTE_WORDS = "Only the most affected sites are named"


def test_figure_png_returns_png_bytes():
    """figure_png renders a plain Figure with the Agg canvas to PNG bytes."""
    fig = Figure(figsize=(2, 2))
    fig.add_subplot().plot([0, 1], [0, 1])
    assert figure_png(fig).startswith(PNG_MAGIC)


def test_pc_vs_distance_figure_with_hostile_names():
    """Names with $ and backslashes are drawn as plain text (no mathtext error)."""
    assert figure_png(pc_vs_distance_figure(hostile_sites())).startswith(PNG_MAGIC)


def test_pc_vs_distance_figure_without_positive_values():
    """A table without positive deposition still gives a PNG (a note instead of points)."""
    sites = hostile_sites().assign(pc_dep_max_kg_n_ha_yr=0.0)
    assert figure_png(pc_vs_distance_figure(sites)).startswith(PNG_MAGIC)


def test_deposition_figure_returns_png():
    """The deposition figure draws grid, site outlines, sources and a contour."""
    rows, cols = np.mgrid[0:30, 0:40]
    grid = 20.0 * np.exp(-np.hypot(rows - 15, cols - 20) / 6.0)  # synthetic, spans ~0.01-20
    grid[0, 0] = np.nan
    sites = gpd.GeoDataFrame({"name": ["a$b$\\c"]}, geometry=[box(100, -300, 300, -100)])
    sources = gpd.GeoDataFrame({"source_id": ["H1"]}, geometry=[Point(500, -375)])
    fig = deposition_figure(
        grid,
        west_m=0.0,
        north_m=0.0,
        cell_m=25.0,
        sites=sites,
        sources=sources,
        contours=[(1.0, "1 $kg$")],
        crs_label="EPSG:32632",
    )
    assert figure_png(fig).startswith(PNG_MAGIC)


def _table(n_sectors: int = 12, first_deg: float = 0.0) -> WeatherClasses:
    """A synthetic frequency table: 3 speeds, 6 stability classes, all wind from one sector."""
    frequency = np.zeros((n_sectors, 3, 6))
    frequency[n_sectors // 2, :, 3] = [0.2, 0.3, 0.1]  # from the south, class D
    frequency[0, 0, 5] = 0.4  # from the first sector, class F, lowest speed
    centres = first_deg + np.arange(n_sectors) * 360.0 / n_sectors
    return WeatherClasses(centres, np.array([1.0, 3.0, 6.5]), frequency)


def test_table_wind_rose_returns_png():
    """A frequency table gives a wind rose PNG, also with sectors not centred on north."""
    assert figure_png(wind_rose_from_table_figure(_table())).startswith(PNG_MAGIC)
    assert figure_png(wind_rose_from_table_figure(_table(16, first_deg=11.25))).startswith(
        PNG_MAGIC
    )


def test_table_wind_rose_shares_add_up_to_the_time():
    """Bars are the frequencies summed over stability, in %, by speed then sector."""
    percent = _table_rose_percent(_table())
    assert percent.shape == (3, 12)  # (speeds, sectors)
    assert_allclose(percent.sum(), 100.0, rtol=1e-12)  # conservation: the whole year
    assert_allclose(percent[:, 6], [20.0, 30.0, 10.0], rtol=1e-12)  # analytic: 0.2, 0.3, 0.1
    assert_allclose(percent[0, 0], 40.0, rtol=1e-12)


def test_table_wind_rose_normalises_counts():
    """Counts instead of fractions give the same shares (scaled to 100 %)."""
    table = _table()
    counts = WeatherClasses(
        table.sector_centres_deg, table.speeds_m_s, table.frequency_fraction * 8760.0
    )
    assert_allclose(_table_rose_percent(counts), _table_rose_percent(table), rtol=1e-12)


def test_table_wind_rose_rejects_a_misshapen_table():
    """A frequency array that does not match the sectors and speeds is refused by name."""
    table = _table()
    bad = WeatherClasses(table.sector_centres_deg, table.speeds_m_s[:2], table.frequency_fraction)
    with pytest.raises(InputError, match="frequency_fraction"):
        wind_rose_from_table_figure(bad)


# --------------------------------------------------------------------------------------------
# many sites: every one drawn, at most MAX_LABELLED_SITES named, and the figure says so
# --------------------------------------------------------------------------------------------

N_MANY = 200


def _many_sites() -> gpd.GeoDataFrame:
    """N_MANY small squares on a lattice; the share of the threshold rises with the index, so
    "Site 199" is the most affected (synthetic: % of load = index / 10, threshold 1 %)."""
    i = np.arange(N_MANY)
    return gpd.GeoDataFrame(
        {
            "name": [f"Site {k}" for k in i],
            "pc_pct_level": i / 20.0,
            "pc_pct_load": i / 10.0,
            "threshold_percent": 1.0,
            "critical_load_used_kg_n_ha_yr": 10.0,
            "pc_dep_max_kg_n_ha_yr": 0.01 + i / 100.0,
            "distance_m": 2000.0 - 9.0 * i,
            "verdict": np.where(i / 10.0 > 1.0, "above threshold", "below threshold"),
        },
        geometry=[
            box(60.0 * (k % 15), -60.0 * (k // 15) - 40, 60.0 * (k % 15) + 40, -60.0 * (k // 15))
            for k in i
        ],
    )


def _texts(fig) -> list[str]:
    """Every text drawn in the figure's axes (names, notes, contour labels)."""
    return [t.get_text() for ax in fig.axes for t in ax.texts]


def _deposition_of(sites) -> Figure:
    rows, cols = np.mgrid[0:40, 0:40]
    grid = 20.0 * np.exp(-np.hypot(rows - 20, cols - 20) / 8.0)  # synthetic, spans ~0.01-20
    return deposition_figure(grid, west_m=-100.0, north_m=100.0, cell_m=25.0, sites=sites)


def test_deposition_figure_names_at_most_the_cap_of_many_sites():
    """200 sites: all 200 outlined in one LineCollection, at most 15 named, the most affected
    among them, and a note says only the most affected are named (cap: common practice, no
    source)."""
    fig = _deposition_of(_many_sites())
    assert figure_png(fig).startswith(PNG_MAGIC)
    names = [t for t in _texts(fig) if t.startswith("Site ")]
    assert 1 <= len(names) <= MAX_LABELLED_SITES == 15
    assert "Site 199" in names  # analytic: the highest % of load over its threshold
    assert len(set(names)) == len(names)
    assert any(NOTE_WORDS in t and "200 sites drawn" in t for t in _texts(fig))
    collections = [c for c in fig.axes[0].collections if isinstance(c, LineCollection)]
    assert len(collections) == 1 and len(collections[0].get_segments()) == N_MANY  # one ring each


def test_pc_vs_distance_figure_names_at_most_the_cap_of_many_sites():
    """200 sites: every point drawn, at most 15 named (the most affected first), a note, and
    the legend beside the axes rather than placed 'best' among the points."""
    sites = pd.DataFrame(_many_sites().drop(columns="geometry"))
    fig = pc_vs_distance_figure(sites)
    assert figure_png(fig).startswith(PNG_MAGIC)
    names = [t for t in _texts(fig) if t.startswith("Site ")]
    assert 1 <= len(names) <= MAX_LABELLED_SITES
    assert "Site 199" in names
    assert any(NOTE_WORDS in t for t in _texts(fig))
    points = fig.axes[0].collections[0]
    assert len(points.get_offsets()) == N_MANY  # every site with a positive deposition
    legend = fig.axes[0].get_legend()
    assert legend is not None and legend._loc != 0  # 0 is matplotlib's code for "best"


def test_few_sites_are_all_named_without_a_note():
    """The four synthetic sites are named as before, and no note is added."""
    texts = _texts(pc_vs_distance_figure(hostile_sites()))
    plotted = hostile_sites().dropna(subset=["pc_dep_max_kg_n_ha_yr"])["name"]
    assert sorted(t for t in texts if t in set(plotted)) == sorted(plotted)
    assert not any(NOTE_WORDS in t for t in texts)


def test_most_affected_order_ranks_by_share_of_threshold():
    """Order by max(% level, % load) / threshold %; a missing half ignored, no figure last,
    ties in layer order (analytic, from the values below)."""
    sites = pd.DataFrame(
        {
            "pc_pct_level": [2.0, np.nan, 30.0, np.nan, 5.0],
            "pc_pct_load": [4.0, 10.0, 10.0, np.nan, 5.0],
            "threshold_percent": [1.0, 1.0, 20.0, 1.0, 1.0],
        }
    )
    # shares: 4, 10, 1.5, none, 5
    assert most_affected_order(sites).tolist() == [1, 4, 0, 2, 3]


def test_site_outlines_give_every_ring():
    """A polygon with a hole gives two rings, a two-part multipolygon two, None nothing."""
    holed = Polygon([(0, 0), (10, 0), (10, 10), (0, 10)], [[(2, 2), (4, 2), (4, 4), (2, 4)]])
    parts = MultiPolygon([box(20, 0, 25, 5), box(30, 0, 35, 5)])
    rings = _site_outlines([holed, parts, None])
    assert len(rings) == 4
    assert all(ring.shape[1] == 2 and (ring[0] == ring[-1]).all() for ring in rings)  # closed


# --------------------------------------------------------------------------------------------
# a caller's Axes: drawn there, its Figure returned; no pyplot
# --------------------------------------------------------------------------------------------


def _hours(n_hours: int = 48) -> HourlyWeather:
    """An invented record: hourly from 2025-01-01, wind from the west at 0.5-12 m/s (cycling
    by 0.5 m/s), Pasquill classes A..F in turn."""
    i = np.arange(n_hours)
    return HourlyWeather(
        np.datetime64("2025-01-01T00:00", "s") + i * np.timedelta64(3600, "s"),
        np.full(n_hours, 270.0),
        0.5 + (i % 24) * 0.5,
        i % 6,
        np.full(n_hours, np.nan),
    )


def _grid() -> np.ndarray:
    rows, cols = np.mgrid[0:30, 0:40]
    return 20.0 * np.exp(-np.hypot(rows - 15, cols - 20) / 6.0)  # synthetic, spans ~0.01-20


def test_report_figures_draw_into_the_callers_axes():
    """Given an Axes, each report figure draws on it and returns its Figure; no other Axes is
    made but the deposition figure's colour bar."""
    fig = Figure()
    ax = fig.subplots()
    assert pc_vs_distance_figure(hostile_sites(), ax=ax) is fig
    assert fig.axes == [ax]
    # the three sites with a finite, positive deposition (synthetic.hostile_sites)
    assert len(ax.collections[0].get_offsets()) == 3

    fig = Figure()
    ax = fig.subplots()
    assert deposition_figure(_grid(), west_m=0.0, north_m=0.0, cell_m=25.0, ax=ax) is fig
    assert len(ax.images) == 1 and ax.images[0].get_array().shape == (30, 40)
    assert fig.axes[0] is ax and len(fig.axes) == 2  # the map and its colour bar


def test_weather_charts_draw_into_the_callers_axes():
    """Two panels of one caller's Figure: the stability chart on the left, a wind rose on the
    right (polar); each chart's bars land on its own panel and the caller's Figure comes back.
    Bar counts, analytic: 6 speed classes x 6 Pasquill classes; 16 sectors x 6 speed classes;
    12 sectors x 3 class speeds."""
    fig = Figure(figsize=(12, 5))
    left = fig.add_subplot(1, 2, 1)
    right = fig.add_subplot(1, 2, 2, projection="polar")
    assert stability_by_speed_figure(_hours(), ax=left) is fig
    assert wind_rose_figure(_hours(), ax=right) is fig
    assert fig.axes == [left, right]
    assert len(left.patches) == 6 * 6
    assert len(right.patches) == 16 * 6
    assert "48 hours" in left.get_title() and "48 hours" in right.get_title()

    fig = Figure()
    rose = fig.add_subplot(projection="polar")
    assert wind_rose_from_table_figure(_table(), ax=rose) is fig
    assert len(rose.patches) == 12 * 3


def test_a_wind_rose_needs_a_polar_axes():
    """A rose drawn into a plain (Cartesian) Axes is refused rather than drawn wrong."""
    ax = Figure().subplots()
    with pytest.raises(ValueError, match="polar"):
        wind_rose_from_table_figure(_table(), ax=ax)
    with pytest.raises(ValueError, match="polar"):
        wind_rose_figure(_hours(), ax=ax)


def test_figures_never_touch_pyplot():
    """Drawing and rendering every figure leaves pyplot unimported (so no global figure state,
    no figure manager); checked in a fresh interpreter."""
    code = textwrap.dedent(
        """
        import sys
        import numpy as np
        import pandas as pd
        from siting.presentation.figures import figure_png, pc_vs_distance_figure
        from siting.presentation.figures import deposition_figure
        from siting.dispersion.inputs import WeatherClasses
        from siting.presentation.weather_figures import wind_rose_from_table_figure
        sites = pd.DataFrame({"name": ["a", "b"], "distance_m": [100.0, 400.0],
                              "pc_dep_max_kg_n_ha_yr": [2.0, 0.5]})
        figure_png(pc_vs_distance_figure(sites))
        figure_png(deposition_figure(np.ones((4, 5)), west_m=0, north_m=0, cell_m=10.0))
        table = WeatherClasses(np.arange(4) * 90.0, np.array([2.0]), np.full((4, 1, 6), 1 / 24))
        figure_png(wind_rose_from_table_figure(table))
        print("pyplot" if "matplotlib.pyplot" in sys.modules else "no pyplot")
        """
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "no pyplot"


# --------------------------------------------------------------------------------------------
# figure_png: one draw, cut to the drawing, as matplotlib's own tight bounding box would cut it
# --------------------------------------------------------------------------------------------

#: How far figure_png's crop may sit from savefig(bbox_inches="tight")'s [px at 110 dpi]: it
#: follows the ink, tight follows the artists' boxes (a text's box holds its line height).
#: Our own tolerance, 0.05 in.
CROP_TOLERANCE_PX = 6


def _png_size(png: bytes) -> tuple[int, int]:
    return Image.open(io.BytesIO(png)).size


def _tight_size(fig) -> tuple[int, int]:
    """(width, height) [px] of matplotlib's own savefig(bbox_inches="tight"), the reference."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=110, bbox_inches="tight")
    return _png_size(buffer.getvalue())


def _spy_savefig(fig, monkeypatch) -> list:
    """The bbox_inches of every savefig call on ``fig`` from now on."""
    calls = []
    real = fig.savefig

    def savefig(*args, **kwargs):
        calls.append(kwargs.get("bbox_inches"))
        return real(*args, **kwargs)

    monkeypatch.setattr(fig, "savefig", savefig)
    return calls


def test_figure_png_keeps_what_sticks_out_in_one_draw(monkeypatch):
    """A legend beside the axes, past the figure's right edge, is kept: the PNG is as wide as
    matplotlib's tight box (reference: matplotlib's own bbox_inches="tight"), wider than the
    figure, and made from one draw (no tight-box pass)."""
    fig = Figure(figsize=(4.0, 3.0))
    ax = fig.subplots()
    ax.plot([0, 1], [0, 1], label="a legend entry")
    ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0))
    calls = _spy_savefig(fig, monkeypatch)
    width, height = _png_size(figure_png(fig))
    assert "tight" not in calls and len(calls) == 1
    tight_width, tight_height = _tight_size(fig)
    assert width > 4.0 * 110  # the figure's own width [px]: the legend is past it
    assert abs(width - tight_width) <= CROP_TOLERANCE_PX
    assert abs(height - tight_height) <= CROP_TOLERANCE_PX


def test_figure_png_falls_back_to_the_tight_box_when_the_drawing_runs_off(monkeypatch):
    """A title far wider than the figure and its drawn margin: figure_png saves the matplotlib
    way, so nothing is cut (the same size as matplotlib's tight box, exactly)."""
    fig = Figure(figsize=(4.0, 3.0))
    fig.subplots().set_title("a very long title " * 30)
    calls = _spy_savefig(fig, monkeypatch)
    size = _png_size(figure_png(fig))
    assert calls[-1] == "tight"
    assert size == _tight_size(fig)


def test_report_figures_are_cut_like_the_tight_box():
    """The report's figures and a wind rose come out within a few pixels of matplotlib's tight
    box (reference: matplotlib's own bbox_inches="tight")."""
    sites = gpd.GeoDataFrame({"name": ["Moor"]}, geometry=[box(100, -300, 300, -100)])
    for fig in (
        deposition_figure(_grid(), west_m=0.0, north_m=0.0, cell_m=25.0, sites=sites),
        pc_vs_distance_figure(hostile_sites()),
        wind_rose_figure(_hours()),
        stability_by_speed_figure(_hours()),
    ):
        width, height = _png_size(figure_png(fig))
        tight_width, tight_height = _tight_size(fig)
        assert abs(width - tight_width) <= CROP_TOLERANCE_PX
        assert abs(height - tight_height) <= CROP_TOLERANCE_PX


def test_deposition_figure_outlines_each_site_by_its_verdict():
    """Each site's rings take its class of verdict's colour (formats.VERDICT_COLOURS, the map's
    and the PC-distance points' too) and a line style of its own, solid for one that does not
    pass, dashed for one that passes, dotted for one not assessed, so a grey print tells them
    apart; the legend names each class drawn with that colour and style (our own choice).
    The class of each site is read from its own columns (formats.verdict_classes)."""
    from matplotlib.colors import to_rgba

    from siting.presentation.formats import VERDICT_COLOURS, verdict_classes

    two_parts = MultiPolygon([box(0, 0, 100, 100), box(300, 0, 400, 100)])
    with_hole = Polygon([(0, 300), (300, 300), (300, 600), (0, 600)],
                        [[(100, 400), (200, 400), (200, 500), (100, 500)]])  # fmt: skip
    sites = gpd.GeoDataFrame(
        {
            "name": ["Fails in two parts", "Passes with a hole", "Not judged", "Fails too"],
            "verdict": ["above threshold", "below threshold", "not assessed", "above threshold"],
            "passes": [False, True, False, False],
            "assessed": [True, True, False, True],
            "pc_pct_load": [50.0, 1.0, np.nan, 30.0],
            "threshold_percent": [20.0, 20.0, 20.0, 20.0],
        },
        geometry=[two_parts, with_hole, box(600, 0, 700, 100), box(600, 300, 700, 400)],
    )
    fig = _deposition_of(sites)
    (outlines,) = [c for c in fig.axes[0].collections if isinstance(c, LineCollection)]
    kinds = verdict_classes(sites)
    rings_per_site = [2, 2, 1, 1]  # the parts, and the exterior and the hole
    ring_kinds = [k for k, n in zip(kinds, rings_per_site) for _ in range(n)]
    colours, styles = outlines.get_colors(), outlines.get_linestyles()
    assert len(outlines.get_segments()) == len(ring_kinds)
    for i, kind in enumerate(ring_kinds):
        assert_allclose(colours[i], to_rgba(VERDICT_COLOURS[kind]), err_msg=kind)
    dashes = {kind: styles[ring_kinds.index(kind)][1] for kind in set(ring_kinds)}
    assert dashes["does not pass"] is None  # solid
    assert dashes["passes"] is not None and dashes["not assessed"] is not None
    assert tuple(dashes["passes"]) != tuple(dashes["not assessed"])
    assert not np.allclose(to_rgba(VERDICT_COLOURS["passes"]),
                           to_rgba(VERDICT_COLOURS["does not pass"]))  # fmt: skip
    legend = fig.axes[0].get_legend()
    entries = {t.get_text(): h for t, h in zip(legend.get_texts(), legend.legend_handles)}
    for kind in ("does not pass", "passes", "not assessed"):
        (label,) = [t for t in entries if t.startswith(f"site that {kind}") or t == f"site {kind}"]
        assert_allclose(to_rgba(entries[label].get_color()), to_rgba(VERDICT_COLOURS[kind]))
    assert "above threshold" in next(t for t in entries if t.startswith("site that does not"))
