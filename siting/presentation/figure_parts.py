"""Building blocks of the figure modules: the Axes to draw in, PNG bytes, naming sites.

:func:`figure_and_axes` gives a figure function the caller's Axes or a new Figure (never
pyplot's); :func:`figure_png` renders a finished Figure to the PNG bytes report.html inlines,
from one draw with the Agg renderer; :func:`label_sites` and :func:`labels_note` name the most
affected sites of a figure without letting names pile up. Used by
:mod:`siting.presentation.figures` and :mod:`siting.presentation.weather_figures`.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:  # imported for annotations only; the module does not need them at run time
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = ["MAX_LABELLED_SITES", "figure_and_axes", "figure_png", "label_sites", "labels_note"]

#: Most site names drawn in one figure; more overlap into an unreadable smear and cost seconds
#: each (text extents are measured one by one). Common practice, no source.
MAX_LABELLED_SITES = 15

#: Blank canvas drawn around a figure by :func:`figure_png` [inches]: what sticks out of the
#: figure (a legend beside the axes, a name at the edge) lands on it and is kept. Our own choice.
_DRAW_MARGIN_IN = 2.0

#: Blank border left around the drawing in the PNG [inches]; matplotlib's default for a tight
#: bounding box (rcParams["savefig.pad_inches"]).
_PAD_IN = 0.1


def figure_and_axes(
    ax: Axes | None = None, *, figsize: tuple[float, float], projection: str | None = None
) -> tuple[Figure, Axes]:
    """The Figure and Axes a figure function draws in: the caller's, or a new pair.

    Parameters
    ----------
    ax : matplotlib Axes, optional
        The caller's Axes; its figure is returned with it, and nothing else is made.
    figsize : (float, float)
        Size of a new Figure [inches], used only without ``ax``.
    projection : str, optional
        Projection of the new Axes (``"polar"`` for a wind rose), used only without ``ax``.

    Returns
    -------
    fig : matplotlib.figure.Figure
        A new Figure (``matplotlib.figure.Figure``, never pyplot's) or the caller's.
    ax : matplotlib Axes
        The Axes to draw in.
    """
    if ax is not None:
        return ax.get_figure(), ax
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    return fig, fig.add_subplot(projection=projection)


def figure_png(fig: Figure, dpi: int = 110) -> bytes:
    """PNG bytes of a Figure cropped to its drawing, from one draw with the Agg renderer.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure. Drawn on a FigureCanvasAgg of its own when its canvas is of another kind
        (its own canvas is put back afterwards); never through pyplot.
    dpi : int, optional
        Resolution [dots per inch].

    Returns
    -------
    png : bytes
        The PNG file contents: what ``savefig(bbox_inches="tight")`` gives, everything drawn
        and a blank border of :data:`_PAD_IN` round it.

    Notes
    -----
    Why not ``bbox_inches="tight"`` itself: it lays the figure out twice, once to measure
    every artist and again to draw at the measured size, where every text is measured afresh
    (most of a figure's time, 0.1-0.2 s each). Here the figure is drawn once, keeping its size
    and layout, on a canvas :data:`_DRAW_MARGIN_IN` larger all round, and cut to the pixels
    that differ from the blank canvas (:func:`_drawn_box`). When the drawing reaches the
    canvas edge (something sticks out further) or nothing is drawn, the figure is saved the
    matplotlib way instead. The crop follows what is drawn, not the artists' boxes, so an edge
    may sit a few pixels from where savefig's would.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.image import imsave
    from matplotlib.transforms import Bbox

    own_canvas = fig.canvas
    canvas = own_canvas if isinstance(own_canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    try:
        width_in, height_in = fig.get_size_inches()
        margin = _DRAW_MARGIN_IN
        padded = Bbox.from_extents(-margin, -margin, width_in + margin, height_in + margin)
        fig.savefig(io.BytesIO(), format="rgba", dpi=dpi, bbox_inches=padded)
        rgba = np.asarray(canvas.buffer_rgba())  # the canvas of that one draw, (rows, cols, 4)
        box = _drawn_box(rgba, pad_px=round(_PAD_IN * dpi))
        png = io.BytesIO()
        if box is None:
            fig.savefig(png, format="png", dpi=dpi, bbox_inches="tight")
        else:
            imsave(png, np.ascontiguousarray(rgba[box]), format="png", dpi=dpi)
        return png.getvalue()
    finally:
        if fig.canvas is not own_canvas:
            fig.set_canvas(own_canvas)


def _drawn_box(rgba: np.ndarray, pad_px: int) -> tuple[slice, slice] | None:
    """Rows and columns of an RGBA canvas that hold the drawing, widened by ``pad_px``.

    The drawing is every pixel that differs from the canvas corner (the blank margin, in the
    figure's face colour). None when nothing is drawn or the drawing touches the canvas edge,
    where it may have been cut.
    """
    pixels = np.ascontiguousarray(rgba).view(np.uint32)[..., 0]  # one number per pixel
    drawn = pixels != pixels[0, 0]
    rows = np.flatnonzero(drawn.any(axis=1))
    if not rows.size:
        return None
    cols = np.flatnonzero(drawn.any(axis=0))
    n_rows, n_cols = drawn.shape
    if rows[0] == 0 or cols[0] == 0 or rows[-1] == n_rows - 1 or cols[-1] == n_cols - 1:
        return None
    return (
        slice(max(rows[0] - pad_px, 0), min(rows[-1] + pad_px + 1, n_rows)),
        slice(max(cols[0] - pad_px, 0), min(cols[-1] + pad_px + 1, n_cols)),
    )


def label_sites(ax: Axes, xy: np.ndarray, names: Sequence[str], **text_options: Any) -> bool:
    """Name sites at their points, most affected first; True when some names were left out.

    Parameters
    ----------
    ax : matplotlib Axes
        With its limits, scales and aspect already set (label boxes are measured in pixels).
    xy : ndarray, shape (n, 2)
        Anchor of each name in data coordinates, in the order to name them (most affected
        first, :func:`siting.presentation.formats.most_affected_order`).
    names : sequence of str
        The names, drawn as plain text (never mathtext).
    **text_options
        Passed to ``Axes.annotate`` (font size, alignment, offset).

    Notes
    -----
    Up to :data:`MAX_LABELLED_SITES` sites every one is named, as drawn before there were
    many. With more, names are placed in order while fewer than the cap are shown, skipping
    one whose box would overlap a name already placed (the most affected are often
    neighbours), and looking at no more than ten times the cap.
    """
    from matplotlib.patheffects import withStroke

    # a light halo keeps a name readable over outlines, points and the coloured grid
    text_options = {
        "path_effects": [withStroke(linewidth=2.0, foreground="#ffffff", alpha=0.8)],
        **text_options,
    }
    if len(names) <= MAX_LABELLED_SITES:
        for (x, y), name in zip(xy, names):
            ax.annotate(str(name), (x, y), parse_math=False, **text_options)
        return False
    from matplotlib.backends.backend_agg import RendererAgg

    fig = ax.get_figure()
    # a renderer of the figure's size to measure the names with, leaving the figure's own
    # canvas alone (a caller's may be a window)
    renderer = RendererAgg(*fig.bbox.size, fig.dpi)
    ax.apply_aspect()  # final axes box, so the data -> pixel transform is the drawn one
    placed: list[Any] = []
    for (x, y), name in list(zip(xy, names))[: 10 * MAX_LABELLED_SITES]:
        text = ax.annotate(str(name), (x, y), parse_math=False, **text_options)
        box = text.get_window_extent(renderer)
        if any(box.overlaps(other) for other in placed):
            text.remove()
            continue
        placed.append(box)
        if len(placed) == MAX_LABELLED_SITES:
            break
    return True


def labels_note(ax: Axes, n_drawn: int) -> None:
    """Say under the x-axis label that only the most affected sites are named.

    Parameters
    ----------
    ax : matplotlib Axes
        The figure's axes; the note is anchored under its x-axis label.
    n_drawn : int
        How many sites the figure draws.
    """
    note = (
        f"Only the most affected sites are named: up to {MAX_LABELLED_SITES}, by PC as a share "
        f"of the screening threshold,\noverlapping names skipped. {n_drawn} sites drawn; "
        "every site is listed in sites.csv."
    )
    ax.annotate(
        note,
        xy=(0.5, 0.0),
        xycoords=ax.xaxis.label,
        xytext=(0, -3),
        textcoords="offset points",
        ha="center",
        va="top",
        fontsize=7,
        color="#505050",
        annotation_clip=False,
        parse_math=False,
    )
