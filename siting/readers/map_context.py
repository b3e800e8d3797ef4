"""The scenario's own layers that give the maps their context: holding, exclusions, footprints.

map.html must be readable with no network, so the farm itself is drawn from the scenario: the
holding boundary of ``[holding]`` and each ``[[holding.exclusion]]`` layer (dwellings,
watercourses, ...), with a label per feature, and the sources' footprints as the scenario
describes them (:func:`source_footprints`: a rectangle of ``width_m`` x ``length_m`` turned by
``angle_deg`` for houses and stores, the point of an outlet). They are read here, checked like
every other vector input (:func:`siting.readers.habitats.read_vector_layer`) and reprojected to
the scenario's CRS; presentation/webmap*.py draws them. No physics and no drawing here.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from siting.readers.habitats import read_vector_layer

__all__ = ["ContextLayer", "MapContext", "read_map_context", "source_footprints"]

#: Attribute columns read as a feature's label, first found first.
_LABEL_FIELDS = ("name", "label", "id")


@dataclass(frozen=True)
class ContextLayer:
    """One layer of context on the maps.

    Attributes
    ----------
    name : str
        What the layer is, in words (the exclusion's ``name``, else "exclusion layer <n>").
    frame : geopandas.GeoDataFrame
        Its features in the scenario's CRS, with a ``label`` column (the feature's own name
        where the layer has a name, label or id field, else empty).
    buffer_m : float
        The distance a new house keeps from the features [m] (0 for the holding boundary).
    """

    name: str
    frame: Any  # GeoDataFrame
    buffer_m: float = 0.0


@dataclass(frozen=True)
class MapContext:
    """The scenario's context layers (all empty for a scenario without ``[holding]``).

    Attributes
    ----------
    holding : ContextLayer or None
        The holding boundary.
    exclusions : tuple of ContextLayer
        The ``[[holding.exclusion]]`` layers, in the scenario's order.
    """

    holding: ContextLayer | None = None
    exclusions: tuple[ContextLayer, ...] = field(default_factory=tuple)


def _labelled(frame: Any, crs: str) -> Any:
    """The layer in ``crs`` with a ``label`` column from its first name-like field."""
    out = frame.to_crs(crs)
    fields = {str(c).lower(): c for c in out.columns if c != out.geometry.name}
    column = next((fields[f] for f in _LABEL_FIELDS if f in fields), None)
    labels = out[column].astype("string").fillna("") if column is not None else ""
    return out.assign(label=labels)[["label", out.geometry.name]]


def read_map_context(scenario: Any) -> MapContext:
    """Read the holding boundary and exclusion layers of a scenario for its maps.

    Parameters
    ----------
    scenario : Scenario
        A loaded scenario (:func:`siting.readers.scenario.load_scenario`); its ``[holding]``
        paths are resolved.

    Returns
    -------
    MapContext
        The layers in the scenario's CRS; empty when the scenario has no ``[holding]``.

    Raises
    ------
    InputFileError
        A layer's file does not exist.
    InputError
        A layer cannot be read, has no features or has no CRS (named as in the scenario).
    """
    holding = scenario.holding
    if holding is None:
        return MapContext()
    boundary = read_vector_layer(holding.file, holding.layer, "holding.file")
    exclusions = []
    for i, spec in enumerate(holding.exclusion, start=1):
        frame = read_vector_layer(spec.file, spec.layer, f"holding.exclusion #{i}")
        exclusions.append(
            ContextLayer(
                spec.name or f"exclusion layer {i}",
                _labelled(frame, scenario.crs),
                float(spec.buffer_m),
            )
        )
    return MapContext(
        ContextLayer("holding boundary", _labelled(boundary, scenario.crs)), tuple(exclusions)
    )


def source_footprints(scenario: Any, table: Any = None, leave_out: str | None = None) -> Any:
    """The scenario's sources as map features: footprints of houses and stores, outlet points.

    Parameters
    ----------
    scenario : Scenario
        A loaded scenario; its base sources (``[[source]]``) are drawn.
    table : pandas.DataFrame, optional
        The sources' derivation (a run's ``sources`` table, one row per ``source_id``): its
        columns are joined to each source's (emission, livestock, ...).
    leave_out : str, optional
        The id of a source not to draw (the house a placement search moves).

    Returns
    -------
    geopandas.GeoDataFrame
        One row per source in the scenario's CRS: source_id, kind, role, height_m and the
        table's columns; the geometry a rectangle of ``width_m`` x ``length_m`` centred on
        x, y with its length along ``angle_deg`` clockwise from north (volume and area
        sources), else the point x, y.
    """
    import geopandas as gpd
    import pandas as pd
    import shapely
    from shapely import affinity

    rows, shapes = [], []
    for src in scenario.sources:
        if src.id == leave_out:
            continue
        rows.append({"source_id": src.id, "kind": src.kind, "role": src.role,
                     "height_m": src.height_m})  # fmt: skip
        if src.kind == "point" or src.width_m is None or src.length_m is None:
            shapes.append(shapely.Point(src.x, src.y))
            continue
        rect = shapely.box(
            src.x - src.width_m / 2, src.y - src.length_m / 2,
            src.x + src.width_m / 2, src.y + src.length_m / 2,
        )  # fmt: skip
        shapes.append(affinity.rotate(rect, -src.angle_deg, origin=(src.x, src.y)))
    frame = pd.DataFrame(rows, columns=["source_id", "kind", "role", "height_m"])
    if table is not None and len(frame):
        extra = [c for c in table.columns if c not in frame.columns or c == "source_id"]
        frame = frame.merge(table[extra], on="source_id", how="left")
    return gpd.GeoDataFrame(frame, geometry=shapes, crs=scenario.crs)
