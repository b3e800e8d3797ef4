"""The scenario file's [[source]] tables: where and how ammonia is released, and how much.

:class:`SourceSpec` checks one source's keys and the rules between them (an emission given
directly or derived from livestock, housing and places; abatement claims and their basis; the
building behind plume rise); ``ROLES`` lists whose a source can be.
"""

from __future__ import annotations

from typing import Literal

from pydantic import Field, model_validator

from siting.readers.scenario_sections import _Section

#: Whose a source is: the installation's new or existing one, one it removes, or another farm's.
ROLES = ("proposed", "existing", "removed", "other")


class SourceSpec(_Section):
    """One [[source]]: where and how ammonia is released, and how much.

    Attributes
    ----------
    id : str
        Unique name of the source (1 to 80 characters).
    kind : {"point", "volume", "area"}
        A point outlet, a volume (a naturally ventilated house) or an area.
    x, y : float
        Position [m] in the scenario's CRS (the centre of a volume or area).
    height_m : float
        Release height [m], 0..100.
    role : {"proposed", "existing", "removed", "other"}
        Whose the source is: the installation's new or existing, removed, or another farm's.
    diameter_m, exit_velocity_m_s : float, optional
        Outlet diameter [m] and exit velocity [m s-1] of a point source.
    width_m, length_m : float, optional
        Footprint of a volume or area source [m].
    angle_deg : float
        Direction of the length axis [deg clockwise from north].
    building_height_m, building_width_m : float, optional
        The building's height and width [m]: plume rise only for an outlet clear of its wake.
    nh3_kg_per_year : float, optional
        Direct annual emission before abatement [kg NH3 yr-1] (instead of livestock/places).
    livestock, housing : str, optional
        Row of emission_factors.toml.
    places : float, optional
        Animal places.
    abatement : str, optional
        Technique id of abatement.toml.
    reduction_percent : float, optional
        A claimed reduction [%] (else the lower end of the technique's range).
    reduction_basis : str, optional
        What supports the claimed reduction.
    treated_air_fraction : float, optional
        Share of the house's air the technique treats [-], 0..1.
    scrubber_design_share : float, optional
        Scrubber capacity / maximum ventilation [-], 0..1 (hourly records).
    options : list of str, optional
        The [[option]] names this source exists in; None (the default) for a source of the
        base scenario, which every option has unless its change leaves it out.
    """

    id: str = Field(min_length=1, max_length=80)
    kind: Literal["point", "volume", "area"] = "point"
    x: float
    y: float
    height_m: float = Field(ge=0, le=100)
    role: Literal["proposed", "existing", "removed", "other"] = "proposed"
    diameter_m: float | None = Field(None, gt=0, le=10)
    exit_velocity_m_s: float | None = Field(None, ge=0, le=40)
    width_m: float | None = Field(None, gt=0, le=2000)
    length_m: float | None = Field(None, gt=0, le=2000)
    angle_deg: float = Field(0.0, ge=-360, le=360)
    building_height_m: float | None = Field(None, gt=0, le=100)
    building_width_m: float | None = Field(None, gt=0, le=500)
    nh3_kg_per_year: float | None = Field(None, ge=0)
    livestock: str | None = None
    housing: str | None = None
    places: float | None = Field(None, ge=0)
    abatement: str | None = None
    reduction_percent: float | None = Field(None, ge=0, le=100)
    reduction_basis: str | None = Field(None, min_length=1, max_length=300)
    treated_air_fraction: float | None = Field(None, ge=0, le=1)
    scrubber_design_share: float | None = Field(None, ge=0, le=1)
    options: list[str] | None = Field(None, min_length=1)

    @model_validator(mode="after")
    def _consistent(self):
        derived = [k for k in ("livestock", "housing", "places") if getattr(self, k) is not None]
        if self.nh3_kg_per_year is not None and derived:
            raise ValueError("give either nh3_kg_per_year or livestock/housing/places, not both")
        if self.nh3_kg_per_year is None and len(derived) != 3:
            missing = [k for k in ("livestock", "housing", "places") if k not in derived]
            raise ValueError(
                "needs nh3_kg_per_year, or livestock, housing and places "
                f"(missing: {', '.join(missing)})"
            )
        if self.kind in ("volume", "area") and (self.width_m is None or self.length_m is None):
            raise ValueError(f"a {self.kind} source needs width_m and length_m")
        if self.kind == "point" and (self.width_m is not None or self.length_m is not None):
            raise ValueError(
                'width_m/length_m apply to volume and area sources; set kind = "volume" or "area"'
            )
        if self.kind != "point" and (self.diameter_m or self.exit_velocity_m_s):
            raise ValueError("diameter_m/exit_velocity_m_s apply to point sources only")
        if self.exit_velocity_m_s and not self.diameter_m:
            raise ValueError("exit_velocity_m_s needs diameter_m (plume rise uses both)")
        if (
            self.reduction_percent is not None
            or self.treated_air_fraction is not None
            or self.scrubber_design_share is not None
            or self.reduction_basis is not None
        ) and self.abatement is None:
            raise ValueError(
                "reduction_percent/reduction_basis/treated_air_fraction/"
                "scrubber_design_share need an abatement technique"
            )
        if self.reduction_basis is not None and self.reduction_percent is None:
            raise ValueError(
                "reduction_basis states the basis of a reduction_percent; "
                "give the reduction_percent it supports"
            )
        if self.building_width_m is not None and self.building_height_m is None:
            raise ValueError(
                "building_width_m needs building_height_m (the wake height depends on both)"
            )
        if self.treated_air_fraction is not None and self.scrubber_design_share is not None:
            raise ValueError(
                "give treated_air_fraction or scrubber_design_share (from which the "
                "treated share is computed over the hourly record), not both"
            )
        return self
