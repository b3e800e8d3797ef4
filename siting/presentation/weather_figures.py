"""The weather charts: wind roses and the stability classes by wind speed, as matplotlib Figures.

A wind rose of an hourly record (:func:`wind_rose_figure`, also drawn by ``siting weather``) or
of a frequency table (:func:`wind_rose_from_table_figure`), drawn alike by one function
(:func:`_draw_rose`), and the Pasquill classes of an hourly record within each wind-speed class
(:func:`stability_by_speed_figure`). Like :mod:`siting.presentation.figures`, every function
draws into the Axes it is given (a polar one for the roses) or into a Figure of its own, and
returns that Figure; the output layer turns it into PNG bytes with
:func:`siting.presentation.figure_parts.figure_png`. No pyplot state is used or left behind.

The binning of hours into direction sectors and speed classes comes from
:mod:`siting.readers.hourly_record`.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from siting.errors import InputError
from siting.physics.plume import STABILITY_CLASSES
from siting.presentation.figure_parts import figure_and_axes
from siting.presentation.formats import format_number
from siting.readers import hourly_table as hourly_record  # binning helpers

if TYPE_CHECKING:  # imported for annotations only; the module does not need them at run time
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from siting.dispersion.hourly import HourlyWeather
    from siting.dispersion.inputs import WeatherClasses

__all__ = ["stability_by_speed_figure", "wind_rose_figure", "wind_rose_from_table_figure"]

#: Size of a wind rose drawn into a Figure of its own [inches].
_ROSE_SIZE_IN = (6.4, 6.0)

#: Size of the stability chart drawn into a Figure of its own [inches].
_STABILITY_SIZE_IN = (7.0, 4.4)

#: Fill of each Pasquill class A..F in the weather charts: warm (unstable) to cool (stable),
#: neutral D grey. Our own choice.
_STABILITY_COLOURS = ("#c8402a", "#e8885a", "#f2c77e", "#b9b9b4", "#7fa8c9", "#2f5f8f")

#: Fill of the speed classes in the wind rose, light (calm) to dark (strong); our own choice.
_SPEED_COLOURS = ("#e7efd6", "#b9d69a", "#7fb86c", "#478f4e", "#24643a", "#0f3b22")


def _record_span(weather: HourlyWeather) -> str:
    """'2024-12-31 23:00 - 2025-12-31 22:00 UTC' of an hourly record."""
    if weather.n_hours == 0:
        return "no hours"
    first = str(np.datetime64(weather.time_utc[0], "m")).replace("T", " ")
    last = str(np.datetime64(weather.time_utc[-1], "m")).replace("T", " ")
    return f"{first} - {last} UTC"


def _colours(palette: Sequence[str], n: int) -> list[str]:
    """n colours from a palette, repeating its last colour when there are more classes."""
    return [palette[min(i, len(palette) - 1)] for i in range(n)]


def _rose_axes(ax: Axes | None) -> tuple[Figure, Axes]:
    """The Figure and polar Axes of a wind rose: the caller's (which must be polar), or new."""
    if ax is not None and getattr(ax, "name", None) != "polar":
        raise ValueError("wind rose: ax must be a polar Axes (projection='polar')")
    return figure_and_axes(ax, figsize=_ROSE_SIZE_IN, projection="polar")


def _draw_rose(
    ax: Axes,
    percent: np.ndarray,
    sector_centres_deg: np.ndarray,
    labels: Sequence[str],
    title: str,
    note: str,
    legend_title: str = "wind speed",
) -> None:
    """Draw a wind rose from shares already binned by speed class and direction sector.

    Parameters
    ----------
    ax : matplotlib PolarAxes
        Where to draw.
    percent : ndarray, shape (n_classes, n_sectors)
        Share of the time in each speed class and direction sector [%].
    sector_centres_deg : ndarray, shape (n_sectors,)
        Direction the wind blows FROM at each sector centre [deg clockwise from north], evenly
        spaced.
    labels : sequence of str
        Legend label of each speed class, without the unit.
    title, note : str
        Title above the rose and a small note below it.
    legend_title : str, optional
        Title of the speed legend.

    Notes
    -----
    North up, directions clockwise, bars stacked from the lowest speed class outwards; radial
    axis in %; legend in m/s beside the rose. Both roses are drawn here, so a frequency-table
    run and an hourly run look alike.
    """
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)  # clockwise, as on a compass
    n_sectors = len(sector_centres_deg)
    width_rad = 2 * np.pi / n_sectors
    theta = np.deg2rad(np.asarray(sector_centres_deg, dtype=float))
    bottom = np.zeros(n_sectors)
    for row, label, colour in zip(percent, labels, _colours(_SPEED_COLOURS, len(labels))):
        ax.bar(
            theta,
            row,
            width=width_rad * 0.92,
            bottom=bottom,
            color=colour,
            edgecolor="#404040",
            linewidth=0.4,
            label=f"{label} m/s",
            align="center",
        )
        bottom += row
    ax.set_xticks(np.deg2rad(np.arange(0, 360, 45)))
    ax.set_xticklabels(["N", "NE", "E", "SE", "S", "SW", "W", "NW"])
    ax.yaxis.set_major_formatter(lambda value, _: f"{value:g} %")
    ax.tick_params(axis="y", labelsize=7)
    ax.set_rlabel_position(112.5)
    ax.legend(
        title=legend_title,
        fontsize=7,
        title_fontsize=8,
        loc="upper left",
        bbox_to_anchor=(1.05, 1.0),
        framealpha=0.9,
    )
    ax.set_title(title, fontsize=10)
    _rose_note(ax, note)


def _rose_note(ax: Axes, note: str) -> None:
    """Write the small note centred under the rose, clear of the "S" below the circle.

    Anchored to the axes (not the figure), so it stays under its rose when the rose is one
    panel of a caller's figure.
    """
    ax.annotate(
        note,
        xy=(0.5, 0.0),
        xycoords="axes fraction",
        xytext=(0, -30),
        textcoords="offset points",
        ha="center",
        va="top",
        fontsize=7,
        color="#505050",
        annotation_clip=False,
        parse_math=False,
    )


def wind_rose_figure(
    weather: HourlyWeather,
    n_sectors: int = 16,
    *,
    speed_edges_m_s: Sequence[float] | None = None,
    ax: Axes | None = None,
) -> Figure:
    """Wind rose of an hourly record: % of hours by direction sector, stacked by speed.

    Parameters
    ----------
    weather : siting.dispersion.hourly.HourlyWeather
        The hours used (calms already raised to the floor speed, so they sit in the lowest
        class with the direction the calm rule gave them).
    n_sectors : int, optional
        Direction sectors, centred on north, >= 4.
    speed_edges_m_s : sequence of float, optional
        Lower edges of the speed classes [m s-1] (default
        ``hourly_record.DEFAULT_SPEED_EDGES_M_S``).
    ax : matplotlib PolarAxes, optional
        Draw into this (polar) Axes; by default into a new Figure of its own.

    Returns
    -------
    fig : matplotlib.figure.Figure
        The figure drawn in: north up, directions clockwise, bars pointing to where the wind
        blows FROM; radial axis in % of the hours used; legend in m/s.

    Raises
    ------
    InputError
        If ``n_sectors`` < 4.
    ValueError
        If ``ax`` is given and is not a polar Axes.

    Notes
    -----
    Directions reported in steps (10 deg) are spread evenly over their step before binning
    (``hourly_record.hours_by_sector``), so 16 sectors from 10 deg data do not alternate in
    height.
    """
    if n_sectors < 4:
        raise InputError(f"wind rose: n_sectors must be >= 4, got {n_sectors}")
    fig, ax = _rose_axes(ax)
    edges = hourly_record.DEFAULT_SPEED_EDGES_M_S if speed_edges_m_s is None else speed_edges_m_s
    labels = hourly_record.speed_class_labels(edges)
    n = weather.n_hours
    title = f"Wind rose: direction the wind blows from\n{n} hours, {_record_span(weather)}"
    if n == 0:
        ax.set_title(title, fontsize=10)
        return fig
    step = hourly_record.direction_step_deg(weather.direction_deg)
    classes = hourly_record.speed_class_index(weather.speed_m_s, edges)
    percent = np.array(
        [
            100.0
            * hourly_record.hours_by_sector(weather.direction_deg[classes == c], n_sectors, step)
            / n
            for c in range(len(labels))
        ]
    )
    note = f"{n_sectors} sectors; % of hours used"
    if step > 0:
        note += f"; directions reported in {step:g} deg steps, spread over each step"
    _draw_rose(ax, percent, np.arange(n_sectors) * 360.0 / n_sectors, labels, title, note)
    return fig


def wind_rose_from_table_figure(weather: WeatherClasses, *, ax: Axes | None = None) -> Figure:
    """Wind rose of a frequency table: % of the time by direction sector, stacked by speed.

    Parameters
    ----------
    weather : siting.dispersion.sector.WeatherClasses
        The table as used by the model (class speeds below the minimum wind speed already
        raised to it, so such classes merge into the lowest one).
    ax : matplotlib PolarAxes, optional
        Draw into this (polar) Axes; by default into a new Figure of its own.

    Returns
    -------
    fig : matplotlib.figure.Figure
        The figure drawn in, with the look of :func:`wind_rose_figure`: north up, directions
        clockwise, one bar per sector of the table pointing to where the wind blows FROM,
        stacked by the table's own speed classes (labelled by their class speed), radial axis
        in % of the time (the frequencies summed over the stability classes,
        :func:`_table_rose_percent`).

    Raises
    ------
    InputError
        If ``frequency_fraction`` is not shaped (sectors, speeds, stability classes) or the
        table has fewer than 4 sectors.
    ValueError
        If ``ax`` is given and is not a polar Axes.
    """
    percent = _table_rose_percent(weather)
    fig, ax = _rose_axes(ax)
    centres_deg = np.asarray(weather.sector_centres_deg, dtype=float)
    labels = [format_number(u) for u in np.asarray(weather.speeds_m_s, dtype=float)]
    title = (
        f"Wind rose: direction the wind blows from\nfrequency table, {centres_deg.size} "
        f"sectors of {360.0 / centres_deg.size:g} deg"
    )
    note = (
        f"% of the time; stacked by the table's class speeds at the anemometer "
        f"({format_number(weather.anemometer_height_m)} m)"
    )
    _draw_rose(ax, percent, centres_deg, labels, title, note, legend_title="class speed")
    return fig


def _table_rose_percent(weather: WeatherClasses) -> np.ndarray:
    """Share of the time in each speed class and sector of a frequency table [%].

    Returns an array of shape (n_speeds, n_sectors): ``frequency_fraction`` summed over the
    stability classes, normalised to 100 % in total (all zeros stay zeros).
    """
    centres_deg = np.asarray(weather.sector_centres_deg, dtype=float)
    speeds_m_s = np.asarray(weather.speeds_m_s, dtype=float)
    frequency = np.asarray(weather.frequency_fraction, dtype=float)
    if frequency.ndim != 3 or frequency.shape[:2] != (centres_deg.size, speeds_m_s.size):
        raise InputError(
            f"wind rose: frequency_fraction must have shape (sectors {centres_deg.size}, "
            f"speeds {speeds_m_s.size}, stability classes), got {frequency.shape}"
        )
    if centres_deg.size < 4:
        raise InputError(f"wind rose: need at least 4 sectors, got {centres_deg.size}")
    by_sector_speed = frequency.sum(axis=2)
    total = by_sector_speed.sum()
    share = by_sector_speed / total if total > 0 else by_sector_speed
    return 100.0 * share.T


def stability_by_speed_figure(
    weather: HourlyWeather,
    *,
    speed_edges_m_s: Sequence[float] | None = None,
    ax: Axes | None = None,
) -> Figure:
    """Stacked bars: share of hours in each Pasquill class A-F within each speed class.

    Parameters
    ----------
    weather : siting.dispersion.hourly.HourlyWeather
        The hours used.
    speed_edges_m_s : sequence of float, optional
        Lower edges of the speed classes [m s-1] (default
        ``hourly_record.DEFAULT_SPEED_EDGES_M_S``).
    ax : matplotlib Axes, optional
        Draw into this Axes; by default into a new Figure of its own.

    Returns
    -------
    fig : matplotlib.figure.Figure
        The figure drawn in: one bar per speed class summing to 100 % (empty classes left
        blank), the number of hours in the class written above it.
    """
    edges = hourly_record.DEFAULT_SPEED_EDGES_M_S if speed_edges_m_s is None else speed_edges_m_s
    labels = hourly_record.speed_class_labels(edges)
    n_classes, n_stab = len(labels), len(STABILITY_CLASSES)
    classes = hourly_record.speed_class_index(weather.speed_m_s, edges)
    counts = np.zeros((n_classes, n_stab))
    np.add.at(counts, (classes, np.asarray(weather.stability_index, dtype=int)), 1.0)
    per_class = counts.sum(axis=1)
    share = 100.0 * counts / np.maximum(per_class, 1.0)[:, None]

    fig, ax = figure_and_axes(ax, figsize=_STABILITY_SIZE_IN)
    _draw_stability_bars(ax, share, per_class, labels)
    ax.set_title(
        f"Stability by wind speed: {weather.n_hours} hours, {_record_span(weather)}", fontsize=10
    )
    return fig


def _draw_stability_bars(
    ax: Axes, share: np.ndarray, per_class: np.ndarray, labels: Sequence[str]
) -> None:
    """Draw the stacked class shares of each speed class, the hours above each bar, the axes
    labels, the legend of the classes beside the axes and the grid.

    Parameters
    ----------
    ax : matplotlib Axes
        Where to draw.
    share : ndarray, shape (n_speed_classes, 6)
        Share of each Pasquill class A..F within each speed class [%].
    per_class : ndarray, shape (n_speed_classes,)
        Hours in each speed class.
    labels : sequence of str
        Label of each speed class [m s-1].
    """
    x = np.arange(len(labels))
    bottom = np.zeros(len(labels))
    for s, (name, colour) in enumerate(zip(STABILITY_CLASSES, _STABILITY_COLOURS)):
        ax.bar(
            x,
            share[:, s],
            bottom=bottom,
            color=colour,
            edgecolor="#404040",
            linewidth=0.4,
            label=name,
            width=0.7,
        )
        bottom += share[:, s]
    for i, hours in enumerate(per_class):
        ax.annotate(
            f"{int(hours)} h",
            (x[i], 100.0),
            textcoords="offset points",
            xytext=(0, 3),
            ha="center",
            fontsize=7,
        )
    ax.set_xticks(x)
    ax.set_xticklabels(labels)
    ax.set_xlabel("Wind speed at the anemometer [m/s]")
    ax.set_ylabel("Share of the hours in the speed class [%]")
    ax.set_ylim(0, 108)
    ax.legend(
        title="Pasquill class",
        fontsize=7,
        title_fontsize=8,
        loc="upper left",
        bbox_to_anchor=(1.01, 1.0),
    )
    ax.grid(True, axis="y", linewidth=0.4, alpha=0.5)
