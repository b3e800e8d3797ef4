"""results.gpkg of ``siting screen``: the run as one GeoPackage, with its layers' styles inside.

Layers, all in the scenario's CRS, each written only when it has features: ``sites`` (the
columns of sites.csv, the sites' polygons), ``sources`` (the columns of sources.csv at each
source's x, y), ``source_footprints`` (the rectangles of volume and area sources, as the run
built them from width_m, length_m and angle_deg), ``receptors`` (the named points with the
columns of receptors.csv), ``contours`` (the deposition grid's lines at the sites' threshold
shares of their critical loads, traced as on the map; attributes value, units, label) and
``holding`` (the holding boundary of ``[holding]``). The layers are written by pyogrio; then the
``layer_styles`` table that desktop GIS reads a GeoPackage's styles from is added with sqlite3
(one default style per layer, as QML and as SLD 1.1, built by
:mod:`siting.presentation.gis_layers`) and registered in ``gpkg_contents`` as an attributes
table. The caller writes into a staging folder (:func:`siting.output.folder.staged_folder`), so
the file appears whole or not at all.
"""

from __future__ import annotations

import contextlib
import sqlite3
from collections.abc import Iterable, Sequence
from datetime import datetime
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from siting.presentation.gis_layers import (
    CONTOUR_UNITS,
    LayerStyle,
    contour_lines,
    contours_style,
    footprints_style,
    holding_style,
    receptors_style,
    sites_style,
    sources_style,
)

if TYPE_CHECKING:  # the types only: a run's result is written, never computed, here
    from siting.readers.map_context import MapContext
    from siting.runs.screening import ScreenResult

#: The layers of results.gpkg, in the order they are written.
LAYERS = ("sites", "sources", "source_footprints", "receptors", "contours", "holding")

#: The styles table, its columns as desktop GIS reads them (an integer key first, as the
#: GeoPackage standard wants of an attributes table).
_STYLES_TABLE = """CREATE TABLE IF NOT EXISTS layer_styles (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    f_table_catalog TEXT(256),
    f_table_schema TEXT(256),
    f_table_name TEXT(256),
    f_geometry_column TEXT(256),
    styleName TEXT(30),
    styleQML TEXT,
    styleSLD TEXT,
    useAsDefault BOOLEAN,
    description TEXT,
    owner TEXT(30),
    ui TEXT(30),
    update_time DATETIME DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now'))
)"""

#: The source attributes the footprints layer carries (from the scenario and sources.csv).
_FOOTPRINT_COLUMNS = ("source_id", "kind", "role", "height_m", "width_m", "length_m",
                      "angle_deg", "nh3_kg_yr", "emission_g_s")  # fmt: skip


def _points(frame: pd.DataFrame, x: str, y: str, crs: str):
    import geopandas as gpd

    return gpd.GeoDataFrame(
        frame.reset_index(drop=True),
        geometry=gpd.points_from_xy(frame[x].astype(float), frame[y].astype(float)),
        crs=crs,
    )


def _footprints(result: ScreenResult):
    """The volume and area sources' rectangles (the run's own, ``result.source_geometries``)."""
    import geopandas as gpd
    import shapely

    derivation = result.sources.set_index("source_id") if len(result.sources) else None
    rows, shapes = [], []
    for src, shape in zip(result.scenario.sources, result.source_geometries):
        if src.kind == "point" or not isinstance(shape, shapely.Polygon):
            continue
        row = {"source_id": src.id, "kind": src.kind, "role": src.role,
               "height_m": src.height_m, "width_m": src.width_m, "length_m": src.length_m,
               "angle_deg": src.angle_deg}  # fmt: skip
        for column in ("nh3_kg_yr", "emission_g_s"):
            found = derivation is not None and src.id in derivation.index
            row[column] = float(derivation.at[src.id, column]) if found else np.nan
        rows.append(row)
        shapes.append(shape)
    frame = pd.DataFrame(rows, columns=list(_FOOTPRINT_COLUMNS))
    return gpd.GeoDataFrame(frame, geometry=shapes, crs=result.scenario.crs)


def _contours(result: ScreenResult, contours: Sequence[tuple[float, str]]):
    """The contour lines at ``contours`` through the deposition grid (as the map traces them)."""
    import geopandas as gpd
    import shapely

    grid = result.grid
    lines = contour_lines(
        result.fields["pc_dep_kg_n_ha_yr"], grid.west_m, grid.north_m, grid.cell_m, contours
    )
    frame = pd.DataFrame(
        {
            "value": [level for level, _, _ in lines],
            "units": [CONTOUR_UNITS] * len(lines),
            "label": [label for _, label, _ in lines],
        }
    )
    shapes = [shapely.LineString(vertices) for _, _, vertices in lines]
    return gpd.GeoDataFrame(frame, geometry=shapes, crs=result.scenario.crs)


def results_layers(
    result: ScreenResult,
    sites_table: pd.DataFrame,
    contours: Sequence[tuple[float, str]],
    context: MapContext | None = None,
) -> dict:
    """The layers of results.gpkg, each a GeoDataFrame in the scenario's CRS.

    Parameters
    ----------
    result : ScreenResult
        The screening run.
    sites_table : pandas.DataFrame
        The sites table as sites.csv holds it (row for row with ``result.sites``).
    contours : sequence of (float, str)
        The contour levels [kg N ha-1 yr-1] and labels (those of the map).
    context : MapContext, optional
        The scenario's holding boundary and exclusion layers (:func:`read_map_context`).

    Returns
    -------
    dict of str to geopandas.GeoDataFrame
        Layer name to its features, in :data:`LAYERS` order; a layer without features (no
        receptors, no footprints, no contour crossing the grid, no holding) is left out.
    """
    import geopandas as gpd

    crs = result.scenario.crs
    sites = result.sites
    layers = {
        "sites": gpd.GeoDataFrame(sites_table, geometry=sites.geometry.values, crs=sites.crs),
        "sources": _points(result.sources, "x_m", "y_m", crs),
        "source_footprints": _footprints(result),
        "receptors": _points(result.receptors, "x", "y", crs) if len(result.receptors) else None,
        "contours": _contours(result, contours)
        if result.fields["pc_dep_kg_n_ha_yr"].size
        else None,
        "holding": context.holding.frame.to_crs(crs)
        if context is not None and context.holding is not None
        else None,
    }
    return {name: frame for name, frame in layers.items() if frame is not None and len(frame)}


def _layer_style(name: str, frame, contours: Sequence[tuple[float, str]]) -> LayerStyle:
    """The default style of one layer of results.gpkg."""
    if name == "sites":
        return sites_style(frame, name)
    if name == "sources":
        return sources_style(frame["role"], name)
    if name == "source_footprints":
        return footprints_style(frame["role"], name)
    if name == "receptors":
        return receptors_style(name)
    if name == "contours":  # every level, so level i has the map's style i
        return contours_style(contours, name)
    return holding_style(name)


def _gpkg_time(run_time: str) -> str:
    """An ISO 8601 time as GeoPackage writes it: UTC, milliseconds, "Z"."""
    moment = datetime.fromisoformat(run_time)
    if moment.utcoffset() is not None:
        moment = (moment - moment.utcoffset()).replace(tzinfo=None)
    return moment.strftime("%Y-%m-%dT%H:%M:%S.") + f"{moment.microsecond // 1000:03d}Z"


def write_layer_styles(path: str | Path, styles: Iterable[LayerStyle], run_time: str) -> None:
    """Add each layer's default style to a GeoPackage's ``layer_styles`` table.

    Parameters
    ----------
    path : str or Path
        An existing GeoPackage holding the styled layers.
    styles : iterable of LayerStyle
        One style per layer (:mod:`siting.presentation.gis_layers`); each becomes the layer's
        default, with its QML and SLD text.
    run_time : str
        Time of the run, ISO 8601 (the styles' update_time).

    Raises
    ------
    KeyError
        A style names a layer that is not a features table of the file.
    """
    stamp = _gpkg_time(run_time)
    # one transaction, begun by hand (sqlite3 would commit the CREATE TABLE on its own): a
    # refused style leaves the file as it was
    with contextlib.closing(sqlite3.connect(path, isolation_level=None)) as db:
        db.execute("BEGIN")
        try:
            columns = dict(db.execute("SELECT table_name, column_name FROM gpkg_geometry_columns"))
            rows = [
                (s.layer, columns[s.layer], s.layer, s.qml, s.sld, s.description, stamp)
                for s in styles
            ]
            db.execute(_STYLES_TABLE)
            db.executemany(
                "INSERT INTO layer_styles (f_table_catalog, f_table_schema, f_table_name, "
                "f_geometry_column, styleName, styleQML, styleSLD, useAsDefault, description, "
                "owner, ui, update_time) VALUES ('', '', ?, ?, ?, ?, ?, 1, ?, '', '', ?)",
                rows,
            )
            db.execute(
                "INSERT OR REPLACE INTO gpkg_contents (table_name, data_type, identifier, "
                "description, last_change, srs_id) VALUES ('layer_styles', 'attributes', "
                "'layer_styles', 'default style of each layer (QML and SLD 1.1)', ?, 0)",
                (stamp,),
            )
        except BaseException:
            db.execute("ROLLBACK")
            raise
        db.execute("COMMIT")


def write_results_gpkg(
    path: str | Path,
    result: ScreenResult,
    sites_table: pd.DataFrame,
    contours: Sequence[tuple[float, str]],
    context: MapContext | None,
    run_time: str,
) -> list[str]:
    """Write results.gpkg: the run's layers (:func:`results_layers`) and their styles.

    Parameters
    ----------
    path : str or Path
        The file to write, in a staging folder (it must not exist yet).
    result : ScreenResult
        The screening run.
    sites_table : pandas.DataFrame
        The sites table as sites.csv holds it.
    contours : sequence of (float, str)
        The contour levels [kg N ha-1 yr-1] and labels (those of the map).
    context : MapContext or None
        The scenario's holding boundary (None: no holding layer).
    run_time : str
        Time of the run, ISO 8601.

    Returns
    -------
    list of str
        The layers written, in order.
    """
    layers = results_layers(result, sites_table, contours, context)
    for name, frame in layers.items():
        frame.to_file(path, layer=name, driver="GPKG", engine="pyogrio")
    write_layer_styles(
        path, [_layer_style(name, frame, contours) for name, frame in layers.items()], run_time
    )
    return list(layers)
