"""Protected habitat sites: read the layer and attach each site's critical values.

An adapter. Reads any vector format geopandas reads, reprojects to the scenario CRS, repairs
invalid polygons (or rejects them by name), and looks up for each site its critical load range
and land cover (config/critical_loads.toml), its critical level (1 ug/m3 where lichens or
bryophytes matter, else 3 ug/m3; config/critical_levels.toml, or a per-site field), its
deposition velocity by land cover and its screening threshold by designation tier
(config/thresholds.toml). The receptor points placed on each site are ``site_points.py``.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd
import shapely

from siting.errors import InputError, InputFileError, InputWarning
from siting.readers.scenario_sections import HabitatsSection
from siting.readers.tables import Tables, suggest


def read_vector_layer(path, layer: str | None, what: str):
    """Read a vector layer geopandas can read; refuse one that is unreadable, empty or has no CRS.

    Parameters
    ----------
    path : Path
        The file (any vector format geopandas reads).
    layer : str or None
        The layer of a multi-layer file; None for the first.
    what : str
        Names the layer in messages (e.g. "habitats.file").

    Returns
    -------
    geopandas.GeoDataFrame
        The features, in the layer's own CRS.

    Raises
    ------
    InputFileError
        The file does not exist.
    InputError
        It cannot be read as a vector layer, has no features or has no CRS.
    """
    import geopandas as gpd

    name = path.name
    try:
        gdf = gpd.read_file(path, layer=layer) if layer else gpd.read_file(path)
    except FileNotFoundError as exc:
        raise InputFileError(f"{what} {name}: not found") from exc
    except Exception as exc:  # drivers raise many types for unreadable files
        raise InputError(f"{what} {name}: cannot read as a vector layer: {exc}") from exc
    if gdf.empty:
        raise InputError(f"{what} {name}: the layer has no features")
    if gdf.crs is None:
        raise InputError(f"{what} {name}: the layer has no CRS; set one in your GIS")
    return gdf


def _positive_field(feature: dict, field: str | None, where: str):
    """(value, "habitat layer field F") where the layer gives a per-site value, else None."""
    if not field:
        return None
    value = feature[field]
    if value is None or pd.isna(value):
        return None
    number = _number(value, field, where)
    if not number > 0:
        raise InputError(f"{where}: {field} must be > 0, got {value}")
    return number, f"habitat layer field {field}"


def _number(value, field: str, where: str) -> float:
    """A habitat-layer value as a finite float, or an InputError naming field and feature."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{where}: {field} must be a number, got {value!r}") from None
    if not math.isfinite(number):  # a float here; np.isfinite is 30x slower on scalars
        raise InputError(f"{where}: {field} must be a finite number, got {value!r}")
    return number


#: Values of a habitat layer's lichens_bryophytes_field, case-insensitive (empty = not known).
_ABSENT = {"absent", "no", "false", "0", "n", "none"}
_PRESENT = {"present", "yes", "true", "1", "y"}


def _lichens_absent(feature: dict, field: str | None, where: str) -> bool | None:
    """True/False where the layer says lichens and bryophytes are absent/present, else None."""
    if not field:
        return None
    value = feature[field]
    if value is None or (not isinstance(value, str) and pd.isna(value)):
        return None
    text = str(value).strip().lower()
    if isinstance(value, (bool, np.bool_)) or text in _ABSENT | _PRESENT:
        return text in _ABSENT
    if isinstance(value, (int, float, np.number)) and float(value) in (0.0, 1.0):
        return float(value) == 0.0
    if not text:
        return None
    raise InputError(
        f"{where}: {field} must say whether lichens and bryophytes are present "
        f"(present/absent, yes/no, true/false, 1/0; empty = not known), "
        f"got {value!r}"
    )


def critical_level_for(
    habitat: dict, levels: dict, absent: bool | None, absent_by_scenario: bool, field: str | None
) -> tuple[float, str, str]:
    """(critical level [ug m-3], basis in words, source) of one site.

    1 ug/m3 (lichens and bryophytes) unless the habitat layer's field or the scenario states
    they are absent: they grow on most sites unless shown otherwise, so the cautious level is
    the default whatever the habitat type ([UNECE2007]; critical_levels.toml).

    Parameters
    ----------
    habitat : dict
        The site's row of critical_loads.toml.
    levels : dict
        Rows of critical_levels.toml by id ("lichens_bryophytes", "higher_plants").
    absent : bool or None
        The habitat layer's field: True when lichens and bryophytes are stated absent, False when
        present, None when not stated.
    absent_by_scenario : bool
        The scenario's ``lichens_bryophytes_absent`` names the site.
    field : str or None
        Name of the habitat layer's field, for the basis in words.

    Returns
    -------
    level_ug_m3 : float
        The critical level [ug m-3].
    basis : str
        Why that level, in words.
    source : str
        The level's source (critical_levels.toml).
    """
    stated = f"habitat layer field {field}: lichens and bryophytes"
    if absent is True:
        key, basis = "higher_plants", f"{stated} absent"
    elif absent is False:
        key, basis = "lichens_bryophytes", f"{stated} present"
    elif absent_by_scenario:
        key = "higher_plants"
        basis = "scenario habitats.lichens_bryophytes_absent: lichens and bryophytes absent"
    elif habitat.get("lichens_bryophytes"):
        key, basis = "lichens_bryophytes", "habitat type where lichens and bryophytes are important"
    else:
        key, basis = "lichens_bryophytes", "lichens and bryophytes not shown absent (default)"
    row = levels[key]
    return float(row["critical_level_ug_m3"]), basis, row["source"]


def critical_load_range(habitat: dict, review: str) -> tuple[float, float, str, str]:
    """(min, max [kg N ha-1 yr-1], review used, source) of a habitat row for a review.

    ``review`` "2022" (Bobbink et al. 2022, the default) or "2011" (Bobbink & Hettelingh
    2011). A row without 2022 values (a user's older table) falls back to 2011; the returned
    review says which was used.

    Parameters
    ----------
    habitat : dict
        The habitat's row of critical_loads.toml.
    review : {"2022", "2011"}
        The review asked for.

    Returns
    -------
    min_kg_n_ha_yr, max_kg_n_ha_yr : float
        The critical-load range [kg N ha-1 yr-1].
    review : str
        The review used.
    source : str
        The range's source.
    """
    if review == "2022" and "critical_load_2022_min_kg_n_ha_yr" in habitat:
        return (
            habitat["critical_load_2022_min_kg_n_ha_yr"],
            habitat["critical_load_2022_max_kg_n_ha_yr"],
            "2022",
            habitat["source_2022"],
        )
    return (
        habitat["critical_load_min_kg_n_ha_yr"],
        habitat["critical_load_max_kg_n_ha_yr"],
        "2011",
        habitat["source"],
    )


def read_habitats(
    section: HabitatsSection,
    crs: str,
    tables: Tables,
    critical_load_end: str = "lower",
    critical_load_review: str = "2022",
):
    """Read the habitat layer and attach each site's critical values and threshold.

    Parameters
    ----------
    section : HabitatsSection
        The scenario's ``[habitats]`` table (file, layer, field names, stated absences).
    crs : str
        The run's projected CRS; the layer is reprojected to it.
    tables : Tables
        The lookup tables (critical loads and levels, thresholds).
    critical_load_end : {"lower", "middle", "upper"}
        Which end of each habitat's critical-load range is used.
    critical_load_review : {"2022", "2011"}
        Which review's ranges are used.

    Returns
    -------
    sites : GeoDataFrame
        One row per feature, in ``crs``, with the columns listed in DESIGN.md's sites table
        that describe the site (not yet the results).

    Warns
    -----
    InputWarning
        Legal but doubtful content (an unknown designation given the strictest tier, a name
        in ``lichens_bryophytes_absent`` that is no site, an invalid polygon repaired, a
        habitat without a range of the review asked for).

    Raises
    ------
    InputFileError
        The layer's file does not exist.
    InputError
        The layer cannot be read, lacks a named field, repeats a site name, or a site's
        habitat or value is unknown or out of range.
    """
    gdf = read_vector_layer(section.file, section.layer, "habitats.file")
    fields = _named_fields(section)
    _check_fields(gdf, fields, section.file.name)
    gdf = gdf.to_crs(crs)
    names = gdf[section.name_field].astype(str).str.strip()
    _check_unique_names(names, section.file.name)
    context = _Context.build(section, tables, critical_load_end, critical_load_review)
    _warn_unknown_absent_names(context, names)
    fallback: set[str] = set()
    # plain lists, not itertuples: no per-row pandas overhead, and a field name need not be
    # a Python identifier ("site name")
    columns = {field: gdf[field].tolist() for field in dict.fromkeys(fields.values())}
    rows = []
    for i, (geom, *values) in enumerate(zip(gdf.geometry.to_numpy(), *columns.values()), start=1):
        feature = dict(zip(columns, values))
        rows.append(_site_row(i, feature, geom, context, fallback))
    for key in sorted(fallback):
        warnings.warn(
            f'critical_loads.toml, habitat "{key}": no 2022 range in the table; the 2011 '
            "range is used",
            InputWarning,
            stacklevel=2,
        )
    import geopandas as gpd

    return gpd.GeoDataFrame(rows, geometry="geometry", crs=crs)


_OPTIONAL_FIELDS = (
    "critical_level_field",
    "critical_load_field",
    "background_deposition_field",
    "background_concentration_field",
    "lichens_bryophytes_field",
)


def _named_fields(section: HabitatsSection) -> dict[str, str]:
    """{scenario key: layer field} of every field the scenario names, the required three
    first (the order in which a missing one is reported)."""
    fields = {k: getattr(section, k) for k in ("name_field", "habitat_field", "designation_field")}
    fields.update({k: getattr(section, k) for k in _OPTIONAL_FIELDS if getattr(section, k)})
    return fields


def _check_fields(gdf, fields: dict[str, str], name: str) -> None:
    """Refuse a layer lacking a field the scenario names, suggesting the closest one."""
    for key, field in fields.items():
        if field not in gdf.columns:
            cols = [c for c in gdf.columns if c != "geometry"]
            raise InputError(
                f'habitats.{key} = "{field}": no such field in {name}'
                f"{suggest(field, cols)} (fields: {', '.join(cols)})"
            )


def _check_unique_names(names: pd.Series, name: str) -> None:
    """Refuse two features with one site name (stripped): sites are reported by name."""
    repeated = names[names.duplicated()]
    if len(repeated):
        first = repeated.iloc[0]
        features = ", ".join(str(i + 1) for i in np.flatnonzero((names == first).to_numpy()))
        raise InputError(
            f"habitats.file {name}: features {features} share the site name "
            f'"{first}"; sites are reported and checked by name: give each a '
            "name of its own, or merge the parts of one site into one feature"
        )


@dataclass(frozen=True)
class _Context:
    """What every feature's lookups need: the scenario's section, the tables (and two of them
    keyed for lookup), the critical load end and review asked for, and the sites named in
    habitats.lichens_bryophytes_absent (stripped, lower case)."""

    section: HabitatsSection
    tables: Tables
    loads_by_name: dict[str, str]
    tiers: list[dict]
    tier_by_designation: dict[str, dict]
    load_end: str
    load_review: str
    absent_names: frozenset[str]

    @classmethod
    def build(
        cls, section: HabitatsSection, tables: Tables, load_end: str, load_review: str
    ) -> _Context:
        """The context of one layer read with these tables and assessment settings."""
        loads = tables.critical_loads
        tiers = sorted(tables.thresholds, key=lambda t: t["threshold_percent"])
        return cls(
            section=section,
            tables=tables,
            loads_by_name={str(r["name"]).lower(): k for k, r in loads.items()},
            tiers=tiers,
            tier_by_designation={d.strip().lower(): t for t in tiers for d in t["designations"]},
            load_end=load_end,
            load_review=load_review,
            absent_names=frozenset(n.strip().lower() for n in section.lichens_bryophytes_absent),
        )


def _warn_unknown_absent_names(context: _Context, names: pd.Series) -> None:
    """An InputWarning for each name in habitats.lichens_bryophytes_absent that matches no
    site."""
    known = set(names.str.lower())
    for missing in sorted(context.absent_names - known):
        warnings.warn(
            f'habitats.lichens_bryophytes_absent: "{missing}" is not a site name in '
            f"{context.section.file.name}; it is ignored",
            InputWarning,
            stacklevel=3,
        )


def _site_geometry(geom, where: str):
    """One feature's polygon: refuse an empty or non-polygon geometry, repair an invalid
    polygon (with an InputWarning), refuse one that cannot be repaired into a polygon of some
    area."""
    if geom is None or geom.is_empty:
        raise InputError(f"{where}: empty geometry")
    if geom.geom_type not in ("Polygon", "MultiPolygon"):
        raise InputError(f"{where}: geometry is a {geom.geom_type}; habitat sites must be polygons")
    if geom.is_valid:
        return geom
    polys = shapely.get_parts(shapely.make_valid(geom))
    polys = [p for p in polys if p.geom_type in ("Polygon", "MultiPolygon")]
    repaired = shapely.union_all(polys) if polys else None
    if repaired is None or repaired.area <= 0:
        raise InputError(
            f"{where}: invalid polygon that cannot be repaired ({shapely.is_valid_reason(geom)})"
        )
    warnings.warn(
        f"{where}: invalid polygon repaired ({shapely.is_valid_reason(geom)})",
        InputWarning,
        stacklevel=3,
    )
    return repaired


def _site_row(i: int, feature: dict, geom, context: _Context, fallback: set[str]) -> dict:
    """The sites-table row of feature ``i`` (1-based; ``feature`` maps layer field to value).

    The checks run in this order, and the first one to fail is the error reported (the
    fault suite relies on it): geometry, habitat, designation (a warning), critical load,
    lichens, critical level, background deposition, background concentration. Adds the habitat
    id to ``fallback`` where the table has no range of the review asked for.
    """
    section = context.section
    site_name = str(feature[section.name_field])
    where = f'habitats.file {section.file.name}, feature {i} ("{site_name}")'
    geom = _site_geometry(geom, where)
    habitat_key = _habitat_key(feature[section.habitat_field], where, context)
    habitat = context.tables.critical_loads[habitat_key]
    designation = str(feature[section.designation_field]).strip()
    tier = _tier(designation, where, context)
    lo, hi, review, used, load_source = _critical_load(habitat, feature, where, context)
    if review != context.load_review:
        fallback.add(habitat_key)
    level, level_basis, level_source = _critical_level(habitat, site_name, feature, where, context)
    land_cover = context.tables.deposition_velocities[habitat["land_cover"]]
    return {
        "site_id": f"S{i:02d}",
        "name": site_name,
        "designation": designation,
        "tier": tier["id"],
        "threshold_percent": float(tier["threshold_percent"]),
        "threshold_source": tier["source"],
        "habitat": habitat_key,
        "habitat_name": habitat["name"],
        "land_cover": habitat["land_cover"],
        "deposition_velocity_m_s": float(land_cover["deposition_velocity_m_s"]),
        "deposition_velocity_source": land_cover["source"],
        "critical_level_ug_m3": float(level),
        "critical_level_basis": level_basis,
        "critical_level_source": level_source,
        "critical_load_review": review,
        "critical_load_min_kg_n_ha_yr": float(lo),
        "critical_load_max_kg_n_ha_yr": float(hi),
        "critical_load_used_kg_n_ha_yr": float(used),
        "critical_load_source": load_source,
        "background_dep_kg_n_ha_yr": _background(
            feature, section.background_deposition_field, where
        ),
        "background_conc_ug_m3": _background(
            feature, section.background_concentration_field, where
        ),
        "area_ha": geom.area / 1e4,
        "geometry": geom,
    }


def _habitat_key(raw, where: str, context: _Context) -> str:
    """The critical_loads.toml id of a layer's habitat value: an id or a row's name, either
    case-insensitive; an error suggesting the closest id otherwise."""
    loads = context.tables.critical_loads
    key = str(raw).strip().lower()
    key = key if key in loads else context.loads_by_name.get(key)
    if key is None:
        raise InputError(
            f'{where}: habitat "{raw}" is not in critical_loads.toml'
            f"{suggest(str(raw).lower(), loads)} (known: {', '.join(sorted(loads))})"
        )
    return key


def _tier(designation: str, where: str, context: _Context) -> dict:
    """The thresholds.toml tier listing a designation (case-insensitive); the strictest tier,
    with an InputWarning, for a designation no tier lists."""
    tier = context.tier_by_designation.get(designation.lower())
    if tier is None:
        tier = context.tiers[0]
        warnings.warn(
            f'{where}: designation "{designation}" matches no tier in '
            f'thresholds.toml; the strictest tier "{tier["id"]}" '
            f"({tier['threshold_percent']:g} %) is used",
            InputWarning,
            stacklevel=3,
        )
    return tier


def _critical_load(habitat: dict, feature: dict, where: str, context: _Context):
    """(min, max, review used, load used [kg N ha-1 yr-1], source of the load used) of one
    site: the asked end of the table's range, or the layer's per-site field where given."""
    lo, hi, review, range_source = critical_load_range(habitat, context.load_review)
    used = {"lower": lo, "middle": 0.5 * (lo + hi), "upper": hi}[context.load_end]
    source = f"{range_source} ({context.load_end} end of range)"
    override = _positive_field(feature, context.section.critical_load_field, where)
    if override is not None:
        used, source = override
    return lo, hi, review, used, source


def _critical_level(habitat: dict, site_name: str, feature: dict, where: str, context: _Context):
    """(critical level [ug m-3], basis in words, source) of one site: by lichens and
    bryophytes (:func:`critical_level_for`), or the layer's per-site field where given."""
    field = context.section.lichens_bryophytes_field
    level, basis, source = critical_level_for(
        habitat,
        context.tables.critical_levels,
        _lichens_absent(feature, field, where),
        site_name.strip().lower() in context.absent_names,
        field,
    )
    override = _positive_field(feature, context.section.critical_level_field, where)
    if override is not None:
        level, source = override
        basis = "given per site in the habitat layer"
    return level, basis, source


def _background(feature: dict, field: str | None, where: str) -> float:
    """A site's background value from the layer's field (>= 0), NaN where not given."""
    if not field:
        return np.nan
    value = feature[field]
    if value is None or pd.isna(value):
        return np.nan
    number = _number(value, field, where)
    if number < 0:
        raise InputError(f"{where}: {field} must be >= 0 (a background), got {value!r}")
    return number
