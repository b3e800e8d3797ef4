"""The plausibility review of a submitted screening run: findings against tables and ranges.

Step 3 of ``siting verify`` (``verification.py``): each :class:`Finding` gives its reason and
the published range or table value it is judged against (this version's config/ tables, which
cite their sources, or a range named as common practice). :func:`review` looks at each source
(emission factor, abatement claim, release), the tables the run used, the weather behind it,
the grid, and, given a reference habitat layer, the sites left out; the most severe first.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path

from siting.errors import InputError
from siting.readers.hourly_record import STATION_WARN_KM
from siting.readers.submission import Submission
from siting.readers.tables import default_reduction_percent, is_claimed_reduction
from siting.runs.screening_inputs import site_lat_lon
from siting.runs.screening_sources import outlet_rise

#: Screening search distances by designation tier [m]: European sites 10 km, national 5 km,
#: local 2 km (EA farm-permit decision documents, e.g. EPR/WP3034VF; confirmed).
SEARCH_DISTANCE_M = {"international": 10_000.0, "national": 5_000.0, "local": 2_000.0}

#: Ranges below are common practice without a published source; findings say so.
HOUSE_HEIGHT_RANGE_M = (1.0, 15.0)
EXIT_VELOCITY_MAX_M_S = 15.0
STATION_DISTANCE_M = (STATION_WARN_KM * 1000.0, 60_000.0)  # medium, high
SEVERITY_ORDER = {"high": 0, "medium": 1, "low": 2, "info": 3}


@dataclass
class Finding:
    """One result of the review: code, severity, subject, message and its evidence.

    Attributes
    ----------
    code : str
        Stable identifier of the kind of finding (e.g. "REDUCTION_CLAIMED", "OUTPUT_CHANGED").
    severity : {"high", "medium", "low", "info"}
        How much it matters; a high one makes the submission not consistent.
    subject : str
        What it is about (a source, a site, a file).
    message : str
        The finding in words, with the range or table value it is judged against.
    evidence : dict
        The figures behind it.
    """

    code: str
    severity: str
    subject: str
    message: str
    evidence: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        """The finding as a plain dict (findings.json).

        Returns
        -------
        dict
            code, severity, subject, message, evidence.
        """
        return dataclasses.asdict(self)


def review(
    sub: Submission,
    result,
    this_tables,
    reference_habitats: Path | None = None,
    name_field: str | None = None,
) -> list[Finding]:
    """Plausibility findings, each judged against this version's tables or a stated range.

    Parameters
    ----------
    sub : Submission
        The submission.
    result : ScreenResult
        The re-run (its scenario and the tables it used).
    this_tables : Tables
        This version's lookup tables, the reference.
    reference_habitats : Path, optional
        A reference habitat layer: its sites within the search distance left out are findings.
    name_field : str, optional
        The reference layer's name field (default the scenario's).

    Returns
    -------
    list of Finding
        The most severe first.
    """
    findings: list[Finding] = []
    scenario = result.scenario
    used = result.tables
    for src in scenario.sources:
        findings += _source_findings(src, used, this_tables)
    findings += _table_findings(used, this_tables)
    findings += _weather_findings(scenario, result)
    findings += _grid_findings(scenario, result)
    if reference_habitats is not None:
        findings += _missing_sites(scenario, result, reference_habitats, name_field)
    return sorted(findings, key=lambda f: SEVERITY_ORDER.get(f.severity, 9))


def _source_findings(src, used, this_tables) -> list[Finding]:
    """One source's findings, in this order: its emission (factor or direct figure), its
    abatement, then its release (height, plume rise, exit velocity)."""
    subject = f'source "{src.id}"'
    return (
        _emission_findings(src, subject, used, this_tables)
        + _abatement_findings(src, subject, this_tables)
        + _release_findings(src, subject)
    )


def _emission_findings(src, subject: str, used, this_tables) -> list[Finding]:
    """A source's emission factor against this version's table (missing row, or the run's factor
    below it), or an emission given directly, whose basis is to be asked for."""
    if src.livestock and src.housing:
        mine = [
            r
            for r in this_tables.emission_factors
            if r["livestock"] == src.livestock and r["housing"] == src.housing
        ]
        theirs = [
            r
            for r in used.emission_factors
            if r["livestock"] == src.livestock and r["housing"] == src.housing
        ]
        if not mine:
            return [
                Finding(
                    "FACTOR_NOT_IN_TABLE",
                    "medium",
                    subject,
                    f"{src.livestock}/{src.housing} has no row in this "
                    "version's emission-factor table",
                    {},
                )
            ]
        if theirs and theirs[0]["nh3_kg_per_place_yr"] < mine[0]["nh3_kg_per_place_yr"]:
            return [
                Finding(
                    "FACTOR_BELOW_TABLE",
                    "high",
                    subject,
                    f"emission factor {theirs[0]['nh3_kg_per_place_yr']:g} kg NH3/place/yr is "
                    f"below the table value {mine[0]['nh3_kg_per_place_yr']:g} for "
                    f"{src.livestock}, {src.housing}",
                    {
                        "submitted_kg_per_place_yr": theirs[0]["nh3_kg_per_place_yr"],
                        "table_kg_per_place_yr": mine[0]["nh3_kg_per_place_yr"],
                        "source": mine[0]["source"],
                    },
                )
            ]
        return []
    if src.nh3_kg_per_year is not None:
        return [
            Finding(
                "EMISSION_GIVEN_DIRECTLY",
                "low",
                subject,
                f"emission given directly ({src.nh3_kg_per_year:g} kg NH3/yr),"
                " not derived from a factor and places: ask for its basis",
                {"nh3_kg_per_year": src.nh3_kg_per_year},
            )
        ]
    return []


def _abatement_findings(src, subject: str, this_tables) -> list[Finding]:
    """A source's abatement: its reduction (outside the published range, or claimed above the
    range's lower end), then a treated share below 1 given without its derivation."""
    if not src.abatement:
        return []
    findings = []
    technique = this_tables.abatement.get(src.abatement)
    finding = _reduction_finding(src, subject, technique)
    if finding is not None:
        findings.append(finding)
    if src.treated_air_fraction is not None and src.treated_air_fraction < 1.0:
        findings.append(
            Finding(
                "TREATED_SHARE_UNDERIVED",
                "medium",
                subject,
                f"treated share {src.treated_air_fraction:g} given without its derivation "
                "(give scrubber_design_share with an hourly record, or the ventilation "
                "calculation behind it)",
                {"treated_air_fraction": src.treated_air_fraction},
            )
        )
    return findings


def _reduction_finding(src, subject: str, technique: dict | None) -> Finding | None:
    """The reduction a source uses (stated, else the technique's default) against the published
    range of ``technique``: outside it is high; a claim above the lower end is medium with a
    stated basis, high without one. None when the technique is unknown or nothing is found."""
    if not technique:
        return None
    reduction = (
        src.reduction_percent
        if src.reduction_percent is not None
        else default_reduction_percent(technique)
    )
    if reduction is not None and not (
        technique["reduction_percent_min"] <= reduction <= technique["reduction_percent_max"]
    ):
        return Finding(
            "REDUCTION_OUT_OF_RANGE",
            "high",
            subject,
            f"{technique['name']}: {reduction:g} % reduction is outside the published "
            f"range {technique['reduction_percent_min']:g}-"
            f"{technique['reduction_percent_max']:g} %",
            {
                "reduction_percent": reduction,
                "published_range_percent": f"{technique['reduction_percent_min']:g}-"
                f"{technique['reduction_percent_max']:g}",
                "source": technique["source"],
            },
        )
    if is_claimed_reduction(src.reduction_percent, technique):
        lo = default_reduction_percent(technique)
        return Finding(
            "REDUCTION_CLAIMED",
            "medium" if src.reduction_basis else "high",
            subject,
            f"{technique['name']}: {src.reduction_percent:g} % claimed, above the "
            f"published lower end {lo:g} % used by default; "
            + (
                f"stated basis: {src.reduction_basis}; check it"
                if src.reduction_basis
                else "no basis stated (reduction_basis): ask for the certificate or measurement"
            ),
            {
                "reduction_percent": src.reduction_percent,
                "lower_end_percent": lo,
                "basis": src.reduction_basis or "",
                "source": technique["source"],
            },
        )
    return None


def _release_findings(src, subject: str) -> list[Finding]:
    """How a source releases its air: a house release height outside the usual range, plume
    rise from an outlet clear of its building's wake, and an unusually fast exit velocity."""
    findings = []
    lo, hi = HOUSE_HEIGHT_RANGE_M
    if src.kind in ("point", "volume") and not lo <= src.height_m <= hi:
        findings.append(
            Finding(
                "RELEASE_HEIGHT_UNUSUAL",
                "medium",
                subject,
                f"release height {src.height_m:g} m is unusual for a livestock house "
                f"({lo:g}-{hi:g} m; common practice, no source)",
                {"height_m": src.height_m, "usual_range_m": f"{lo:g}-{hi:g}"},
            )
        )
    rise, rise_basis = outlet_rise(src)
    if rise:
        findings.append(
            Finding(
                "PLUME_RISE_CLAIMED",
                "medium",
                subject,
                f"the outlet gets momentum plume rise as clear of its building's wake "
                f"({rise_basis}); rise lowers nearby figures: check the building dimensions",
                {
                    "height_m": src.height_m,
                    "building_height_m": src.building_height_m,
                    "building_width_m": src.building_width_m,
                    "source": "US EPA 1985 good-engineering-practice stack height, Hb + 1.5 L",
                },
            )
        )
    if src.exit_velocity_m_s and src.exit_velocity_m_s > EXIT_VELOCITY_MAX_M_S:
        findings.append(
            Finding(
                "EXIT_VELOCITY_UNUSUAL",
                "medium",
                subject,
                f"exit velocity {src.exit_velocity_m_s:g} m/s is above what house fans or "
                f"scrubber outlets usually give (<= {EXIT_VELOCITY_MAX_M_S:g} m/s; common "
                "practice, no source); plume rise lowers nearby figures",
                {"exit_velocity_m_s": src.exit_velocity_m_s},
            )
        )
    return findings


def _table_findings(used, mine) -> list[Finding]:
    findings = []
    for key, row in used.critical_loads.items():
        ref = mine.critical_loads.get(key)
        if ref and row["critical_load_min_kg_n_ha_yr"] > ref["critical_load_min_kg_n_ha_yr"]:
            findings.append(
                Finding(
                    "CRITICAL_LOAD_ABOVE_TABLE",
                    "high",
                    f'habitat "{key}"',
                    f"critical load range starts at {row['critical_load_min_kg_n_ha_yr']:g}, above "
                    f"the table's {ref['critical_load_min_kg_n_ha_yr']:g} kg N/ha/yr",
                    {
                        "published_range_kg_n_ha_yr": f"{ref['critical_load_min_kg_n_ha_yr']:g}-"
                        f"{ref['critical_load_max_kg_n_ha_yr']:g}",
                        "source": ref["source"],
                    },
                )
            )
    for key, row in used.deposition_velocities.items():
        ref = mine.deposition_velocities.get(key)
        if ref and row["deposition_velocity_m_s"] < ref["deposition_velocity_m_s"]:
            findings.append(
                Finding(
                    "DEPOSITION_VELOCITY_BELOW_TABLE",
                    "high",
                    f'land cover "{key}"',
                    f"deposition velocity {row['deposition_velocity_m_s']:g} m/s is below the "
                    f"table's {ref['deposition_velocity_m_s']:g} m/s",
                    {"table_m_s": ref["deposition_velocity_m_s"], "source": ref["source"]},
                )
            )
    theirs = {t["id"]: t for t in used.thresholds}
    for tier in mine.thresholds:
        other = theirs.get(tier["id"])
        if other and other["threshold_percent"] > tier["threshold_percent"]:
            findings.append(
                Finding(
                    "THRESHOLD_ABOVE_DEFAULT",
                    "medium",
                    f'tier "{tier["id"]}"',
                    f"screening threshold {other['threshold_percent']:g} % is above this version's "
                    f"default {tier['threshold_percent']:g} % (defaults are to be replaced by the "
                    "jurisdiction's; check which applies)",
                    {"source": tier["source"]},
                )
            )
    return findings


def _weather_findings(scenario, result) -> list[Finding]:
    """The weather behind the run: what its record allows to be checked (a frequency table
    cannot be; an hourly record's length, calms and gaps can), then the station's distance."""
    w = scenario.weather
    if w.hourly is None:
        findings = [
            Finding(
                "WEATHER_TABLE_UNVERIFIABLE",
                "info",
                "weather",
                "a frequency table: its record length, station and calms cannot "
                "be checked; ask for the hourly record behind it",
                {},
            )
        ]
    else:
        findings = _hourly_record_findings(result.weather_summary)
    return findings + _station_findings(scenario, result.weather_summary)


def _hourly_record_findings(summary: dict) -> list[Finding]:
    """An hourly record's length (under a year is high, under three low), share of calms (over
    10 %) and of missing hours (over 5 %), from the run's weather summary."""
    findings = []
    years = float(summary.get("record_years", 0))
    if years < 1.0:
        findings.append(
            Finding(
                "WEATHER_SHORT",
                "high",
                "weather",
                f"the hourly record covers {years:.2f} years; a long-term "
                "mean needs at least one full year",
                {"record_years": years},
            )
        )
    elif years < 3.0:
        findings.append(
            Finding(
                "WEATHER_FEW_YEARS",
                "low",
                "weather",
                f"{years:.1f} year(s) of weather; several years (3-5) reduce "
                "the year-to-year spread (common practice, no source)",
                {"record_years": years},
            )
        )
    calms = float(summary.get("calm_percent", 0.0))
    if calms > 10.0:
        findings.append(
            Finding(
                "WEATHER_MANY_CALMS",
                "medium",
                "weather",
                f"{calms:.1f} % calms (over 10 %; common practice, no "
                "source): results rest on the calm rule",
                {"calm_percent": calms},
            )
        )
    missing = float(summary.get("missing_percent", 0.0))
    if missing > 5.0:
        findings.append(
            Finding(
                "WEATHER_GAPS",
                "medium",
                "weather",
                f"{missing:.1f} % of hours missing (over 5 %; common practice, no source)",
                {"missing_percent": missing},
            )
        )
    return findings


def _station_findings(scenario, summary: dict | None = None) -> list[Finding]:
    """The weather station's distance from the site (WGS84 geodesic): unknown without its
    position, medium beyond STATION_DISTANCE_M's first figure, high beyond its second. A
    record that knows its own position (a reanalysis grid point) is placed by it."""
    w = scenario.weather
    position = (summary or {}).get("record_position") or {}
    if position.get("distance_km") is not None:
        return _distance_findings(float(position["distance_km"]) * 1000.0, position["position"])
    if w.station_latitude_deg is None or w.station_longitude_deg is None:
        return [
            Finding(
                "WEATHER_STATION_UNKNOWN",
                "info",
                "weather",
                "the weather station's position is not given "
                "(weather.station_latitude_deg/longitude_deg): distance to the "
                "site not checked",
                {},
            )
        ]
    from pyproj import Geod

    lat, lon = site_lat_lon(scenario)
    _, _, distance = Geod(ellps="WGS84").inv(
        lon, lat, w.station_longitude_deg, w.station_latitude_deg
    )
    return _distance_findings(distance, "the station")


def _distance_findings(distance: float, what: str) -> list[Finding]:
    """WEATHER_FAR past STATION_DISTANCE_M's first figure (medium), its second (high)."""
    medium, high = STATION_DISTANCE_M
    if distance > medium:
        return [
            Finding(
                "WEATHER_FAR",
                "high" if distance > high else "medium",
                "weather",
                f"{what} is {distance / 1000:.0f} km from the "
                f"site (over {medium / 1000:.0f} km; common practice, no "
                "source)",
                {"distance_km": round(distance / 1000, 1)},
            )
        ]
    return []


def _grid_findings(scenario, result) -> list[Finding]:
    sites = result.sites
    assessed = sites[sites["assessed"]]
    if assessed.empty:
        return []
    nearest = float(assessed["distance_m"].min())
    spacing = scenario.grid.spacing_m
    if spacing > nearest / 10.0:
        name = assessed.loc[assessed["distance_m"].idxmin(), "name"]
        return [
            Finding(
                "GRID_COARSE",
                "medium",
                "grid",
                f"grid spacing {spacing:g} m is coarse for the nearest site ({name}, "
                f"{nearest:.0f} m away): at most a tenth of the distance resolves the "
                "gradient (common practice, no source); site points soften this",
                {"spacing_m": spacing, "nearest_site_m": round(nearest, 1)},
            )
        ]
    return []


def _missing_sites(scenario, result, reference: Path, name_field: str | None) -> list[Finding]:
    import geopandas as gpd
    import shapely

    try:
        ref = gpd.read_file(reference).to_crs(scenario.crs)
    except Exception as exc:
        raise InputError(
            f"reference_habitats {reference}: cannot read as a vector layer: {exc}",
            parameters=("reference_habitats",),
        ) from exc
    field_name = name_field or scenario.habitats.name_field
    designation_field = scenario.habitats.designation_field
    tier_of = {
        d.strip().lower(): t["id"] for t in result.tables.thresholds for d in t["designations"]
    }
    installation = [s for s in scenario.sources if s.role in ("proposed", "existing")]
    if not installation:
        return []
    centre = shapely.MultiPoint([(s.x, s.y) for s in installation])
    submitted = shapely.union_all(result.sites.geometry.to_numpy())
    findings = []
    for row in ref.itertuples():
        geom = row.geometry
        if geom is None or geom.is_empty:
            continue
        tier = tier_of.get(str(getattr(row, designation_field, "")).strip().lower(), "local")
        limit = SEARCH_DISTANCE_M.get(tier, 2_000.0)
        distance = geom.distance(centre)
        if distance > limit:
            continue
        overlap = geom.intersection(submitted).area / geom.area if geom.area > 0 else 0.0
        if overlap < 0.5:
            name = str(getattr(row, field_name, "?"))
            findings.append(
                Finding(
                    "SITE_LEFT_OUT",
                    "high",
                    f'site "{name}"',
                    f"{name} ({tier}) lies {distance:.0f} m from the installation, within the "
                    f"{limit / 1000:g} km search distance, but is not in the submitted habitat layer",
                    {
                        "distance_m": round(distance, 1),
                        "search_distance_m": limit,
                        "source": "EA farm-permit decisions (e.g. EPR/WP3034VF): 10 km European sites, "
                        "5 km national, 2 km local; confirmed",
                    },
                )
            )
    return findings
