"""The farms layer of a regional run: one source per feature, its emission and release class.

A reader. Any vector layer geopandas reads (points: point sources; polygons: house footprints,
volume sources at their centroids), in a projected CRS in metres. Each farm's annual ammonia
emission is its emission field or, where that is empty, derived from its livestock, housing and
places (config/emission_factors.toml, less an abatement's default reduction); its release height
is its height field or a default by kind; its release class (``kernels.release_class``)
groups farms that share one unit-source kernel. Checked farm by farm, each fault named by farm.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.kernels import release_class
from siting.errors import InputError, InputFileError, InputWarning
from siting.physics.constants import kg_per_year_to_g_s
from siting.physics.emissions import derive_emission
from siting.readers.habitats import read_vector_layer
from siting.readers.scenario import projected_crs
from siting.readers.tables import Tables, default_reduction_percent, suggest

#: Release height of a farm whose layer gives none [m], by kind (common practice, no source):
#: a roof or ridge outlet of a fan-ventilated house for points, about half the ridge height of
#: a naturally ventilated house (its volume) for polygons.
DEFAULT_RELEASE_HEIGHT_M = {"point": 6.0, "volume": 4.0}
DERIVATION_FIELDS = ("livestock", "housing", "places")


@dataclass(frozen=True)
class FarmFields:
    """Which attribute of the farms layer holds what (None: the default name if present).

    Attributes
    ----------
    id_field : str, optional
        The farm's id (default ``id``; else the feature number).
    emission_field : str, optional
        Annual emission before abatement [kg NH3 yr-1] (default ``nh3_kg_per_year``).
    height_field : str, optional
        Release height [m] (default ``height_m``).
    layer : str, optional
        The layer of a multi-layer file.
    """

    id_field: str | None = None
    emission_field: str | None = None
    height_field: str | None = None
    layer: str | None = None


_CRS_FIX = (
    "give crs with a projected CRS in metres, e.g. the UTM zone of the region (EPSG:326xx north)"
)


def _numbers(
    frame, column: str, name: str, ids, low: float, high: float | None, allow_missing: bool
) -> np.ndarray:
    """A numeric attribute, checked per farm; missing values are NaN where allowed."""
    missing = pd.isna(frame[column]).to_numpy()
    values = pd.to_numeric(frame[column], errors="coerce").to_numpy(dtype=float)
    with np.errstate(invalid="ignore"):
        bad = (
            ~np.isfinite(values)
            | (values < low)
            | (values > (high if high is not None else np.inf))
        )
    if allow_missing:
        bad &= ~missing
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        limit = f">= {low:g}" + (f" and <= {high:g}" if high is not None else "")
        raise InputError(
            f'{name}, farm "{ids[i]}": {column} must be a number {limit}, got '
            f"{frame[column].iloc[i]!r}"
        )
    return values


def read_farms(
    path: Path, tables: Tables, fields: FarmFields = FarmFields(), crs: str | None = None
) -> tuple[pd.DataFrame, str]:
    """Read the farms layer: one source per feature, with its emission and release class.

    Parameters
    ----------
    path : Path
        Any vector layer geopandas reads. Points are point sources; polygons are volume sources
        of the polygon's area, at its centroid.
    tables : Tables
        Lookup tables (emission factors and abatement, for farms given as livestock).
    fields : FarmFields
        Attribute names. Emission: ``emission_field`` (default ``nh3_kg_per_year``) [kg NH3
        yr-1]; where it is absent or empty, ``livestock``, ``housing``, ``places`` (+ optional
        ``abatement``, at its default reduction) looked up in config/emission_factors.toml and
        abatement.toml. Height: ``height_field`` (default
        ``height_m``) [m]; missing values take DEFAULT_RELEASE_HEIGHT_M of the kind. Id:
        ``id_field`` (default ``id``; else the feature number).
    crs : str, optional
        Projected CRS in metres to work in; default the layer's own (which must then be one).

    Returns
    -------
    farms : DataFrame
        farm_id, kind, x_m, y_m, release_height_m, footprint_area_m2, nh3_kg_yr, emission_g_s,
        emission_from, release_class (a ReleaseClass).
    crs : str

    Warns
    -----
    InputWarning
        The layer has no id field (farms are named by feature number).

    Raises
    ------
    InputFileError, InputError
        Missing or unreadable file; no CRS or a geographic one; no emission field; a value out
        of range, an unknown livestock, a duplicate id or an unusable geometry (named by farm).
    """
    path = Path(path)
    name = f"farms layer {path.name}"
    gdf, crs = _open_farms(path, name, fields.layer, crs)
    columns = [c for c in gdf.columns if c != "geometry"]
    # the checks run in this order, so the first fault reported stays the same
    id_col = _field_name(name, columns, "id_field", fields.id_field, "id")
    ids = _farm_ids(gdf, id_col, name)
    frame = _farm_positions(gdf, ids, name)
    nh3_kg_yr, emission_from = _farm_emissions(gdf, ids, name, columns, tables, fields)
    frame["nh3_kg_yr"] = nh3_kg_yr
    frame["emission_from"] = emission_from
    frame["emission_g_s"] = kg_per_year_to_g_s(frame["nh3_kg_yr"].to_numpy(float))
    height_col = _field_name(name, columns, "height_field", fields.height_field, "height_m")
    heights = _release_heights(gdf, frame["kind"], ids, name, height_col)
    frame["release_height_m"] = heights
    frame["release_class"] = [
        release_class(k, h, a)
        for k, h, a in zip(frame["kind"], heights, frame["footprint_area_m2"])
    ]
    return frame, crs


def _open_farms(path: Path, name: str, layer: str | None, crs: str | None):
    """The farms layer as read, in its working CRS: (GeoDataFrame, CRS).

    The CRS is the one given (the layer is reprojected to it) or else the layer's own; either
    must be projected, in metres (InputError with the fix otherwise).
    """
    if not path.exists():
        raise InputFileError(f"{name}: not found ({path})")
    gdf = read_vector_layer(path, layer, "farms layer")
    if crs is None:
        crs = projected_crs(gdf.crs, name, _CRS_FIX, key="CRS", parameters=("crs",))
    else:
        crs = projected_crs(crs, "crs", _CRS_FIX, key="CRS", parameters=("crs",))
        gdf = gdf.to_crs(crs)
    return gdf, crs


def _field_name(
    name: str, columns: list[str], option: str, given: str | None, default: str
) -> str | None:
    """The layer field an option (a FarmFields parameter) names (InputError if there is no
    such field), else the default name where the layer has it, else None."""
    if given is not None and given not in columns:
        raise InputError(
            f'{name}: {option} "{given}": no such field{suggest(given, columns)} '
            f"(fields: {', '.join(columns) or 'none'})",
            parameters=(option,),
        )
    return given if given is not None else (default if default in columns else None)


def _farm_ids(gdf, id_col: str | None, name: str) -> list[str]:
    """Each farm's id (from ``id_col``, else F1, F2, ... with an InputWarning).

    Raises InputError for an id used twice.
    """
    if id_col is None:
        ids = [f"F{i}" for i in range(1, len(gdf) + 1)]
        warnings.warn(
            f'{name}: no "id" field; farms are named by feature number (F1, F2, ...)',
            InputWarning,
            stacklevel=3,
        )
    else:
        ids = [str(v) for v in gdf[id_col]]
        seen: set[str] = set()
        for farm_id in ids:
            if farm_id in seen:
                raise InputError(f'{name}: duplicate farm id "{farm_id}" in field {id_col}')
            seen.add(farm_id)
    return ids


def _farm_positions(gdf, ids: list[str], name: str) -> pd.DataFrame:
    """The farms' frame so far: farm_id, kind, x_m, y_m, footprint_area_m2 (geometry -> kind,
    position, footprint), checked farm by farm in the layer's order."""
    kinds, xs, ys, areas = [], [], [], []
    for farm_id, geom in zip(ids, gdf.geometry):
        kind, x, y, area = _farm_position(geom, name, farm_id)
        kinds.append(kind)
        xs.append(x)
        ys.append(y)
        areas.append(area)
    return pd.DataFrame(
        {"farm_id": ids, "kind": kinds, "x_m": xs, "y_m": ys, "footprint_area_m2": areas}
    )


def _farm_position(geom, name: str, farm_id: str) -> tuple[str, float, float, float]:
    """One farm's kind ("point" or "volume"), position x, y [m] and footprint area [m2].

    A point is itself with no area; a polygon (repaired if invalid) is its centroid and area.
    Raises InputError for an empty geometry, a polygon of no area or another geometry type.
    """
    import shapely

    if geom is None or geom.is_empty:
        raise InputError(f'{name}, farm "{farm_id}": empty geometry')
    if geom.geom_type == "Point":
        return "point", geom.x, geom.y, 0.0
    if geom.geom_type in ("Polygon", "MultiPolygon"):
        if not geom.is_valid:
            geom = shapely.make_valid(geom)
        if geom.area <= 0:
            raise InputError(f'{name}, farm "{farm_id}": the polygon encloses no area')
        c = geom.centroid
        return "volume", c.x, c.y, geom.area
    raise InputError(
        f'{name}, farm "{farm_id}": geometry is a {geom.geom_type}; farms '
        "must be points (point sources) or polygons (house footprints)"
    )


def _farm_emissions(
    gdf, ids: list[str], name: str, columns: list[str], tables: Tables, fields: FarmFields
) -> tuple[np.ndarray, list[str]]:
    """Each farm's emission [kg NH3 yr-1] and where it came from.

    The emission field, else (per farm, where it is empty) livestock x places, less the
    abatement's default reduction (:func:`_derived_emission`). Raises InputError when the layer
    has neither, or a farm has no emission, or a value is out of range.
    """
    emission_col = _field_name(
        name, columns, "emission_field", fields.emission_field, "nh3_kg_per_year"
    )
    can_derive = all(f in columns for f in DERIVATION_FIELDS)
    if emission_col is None and not can_derive:
        raise InputError(
            f'{name}: no emission field "{fields.emission_field or "nh3_kg_per_year"}"'
            " and no livestock, housing and places fields to derive one; give "
            "emission_field (kg NH3 per year) "
            f"(fields: {', '.join(columns) or 'none'})",
            parameters=("emission_field",),
        )
    given = (
        _numbers(gdf, emission_col, name, ids, 0.0, None, True)
        if emission_col is not None
        else np.full(len(gdf), np.nan)
    )
    emissions, emission_from = [], []
    for i, farm_id in enumerate(ids):
        if not np.isnan(given[i]):
            emissions.append(given[i])
            emission_from.append(f"field {emission_col}")
            continue
        where = f'{name}, farm "{farm_id}"'
        row = gdf.iloc[i]
        if not can_derive or any(pd.isna(row[f]) for f in DERIVATION_FIELDS):
            raise InputError(
                f"{where}: no emission: give {emission_col or 'nh3_kg_per_year'} "
                "(kg NH3 per year) or livestock, housing and places"
            )
        nh3_kg_yr, source = _derived_emission(gdf, i, row, farm_id, name, columns, tables)
        emissions.append(nh3_kg_yr)
        emission_from.append(source)
    return np.asarray(emissions, dtype=float), emission_from


def _derived_emission(
    gdf, i: int, row, farm_id: str, name: str, columns: list[str], tables: Tables
) -> tuple[float, str]:
    """One farm's emission [kg NH3 yr-1] from its livestock, housing and places (row ``i``),
    less its abatement's default reduction, and the text saying so (emission_from)."""
    where = f'{name}, farm "{farm_id}"'
    factor = tables.factor(str(row["livestock"]), str(row["housing"]), where)
    places = _numbers(gdf.iloc[[i]], "places", name, [farm_id], 0.0, None, False)[0]
    reduction, technique = 0.0, None
    if "abatement" in columns and isinstance(row["abatement"], str) and row["abatement"]:
        technique = tables.technique(row["abatement"], where)
        reduction = default_reduction_percent(technique)
    d = derive_emission(
        factor_nh3_kg_per_place_yr=factor["nh3_kg_per_place_yr"],
        places=places,
        reduction_percent=reduction,
    )
    return d.nh3_kg_yr, (
        f"{places:g} {row['livestock']} places x "
        f"{factor['nh3_kg_per_place_yr']:g} kg/place/yr ({factor['source']})"
        + (f" less {technique['id']} {reduction:g} %" if technique else "")
    )


def _release_heights(gdf, kinds: pd.Series, ids: list[str], name: str, height_col: str | None):
    """Each farm's release height [m]: the height field, 0..100 m; where that is absent or
    empty, DEFAULT_RELEASE_HEIGHT_M of the farm's kind."""
    default_h = kinds.map(DEFAULT_RELEASE_HEIGHT_M).to_numpy(float)
    if height_col is None:
        return default_h
    given = _numbers(gdf, height_col, name, ids, 0.0, 100.0, True)
    return np.where(np.isnan(given), default_h, given)
