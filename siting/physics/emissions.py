"""Source strengths: emission factor x animal places, less abatement, down to g/s.

Pure arithmetic on floats. The factor and the technique's figures come from the config tables
(looked up by the caller); this module only combines them and records each step so the
derivation can be printed in sources.csv and the report.

Effective reduction = technique reduction x share of the house's ammonia that passes the
scrubber (treated_air_fraction). For a scrubber, the ammonia removed ends up in the effluent:
N captured [kg N yr-1] = NH3 removed x M(N) / M(NH3); effluent volume = N captured / N content of
the effluent of that technique [kg N m-3] (common practice, no source).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

from siting.physics.constants import N_PER_NH3_MASS_RATIO, kg_per_year_to_g_s


@dataclass(frozen=True)
class EmissionDerivation:
    """Every step from factor (or direct figure) to source strength.

    Attributes
    ----------
    factor_nh3_kg_per_place_yr : float or None
        Emission factor [kg NH3 place-1 yr-1]; None for a direct figure.
    places : float or None
        Animal places; None for a direct figure.
    nh3_unabated_kg_yr : float
        Emission before abatement [kg NH3 yr-1].
    reduction_percent : float
        The technique's reduction of the air it treats [%].
    treated_air_fraction : float
        Share of the house's ammonia that passes the technique [-].
    effective_reduction_percent : float
        Reduction of the house's total emission [%].
    nh3_kg_yr : float
        Emission after abatement [kg NH3 yr-1].
    emission_g_s : float
        Mean source strength [g s-1].
    nh3_removed_kg_yr : float
        Ammonia removed by the technique [kg NH3 yr-1].
    n_captured_kg_yr : float or None
        Nitrogen captured in a scrubber's effluent [kg N yr-1]; None without a scrubber.
    effluent_m3_yr : float or None
        Effluent volume [m3 yr-1]; None when the technique states no N content.
    """

    factor_nh3_kg_per_place_yr: float | None
    places: float | None
    nh3_unabated_kg_yr: float
    reduction_percent: float
    treated_air_fraction: float
    effective_reduction_percent: float
    nh3_kg_yr: float
    emission_g_s: float
    nh3_removed_kg_yr: float
    n_captured_kg_yr: float | None
    effluent_m3_yr: float | None

    def as_dict(self) -> dict:
        """Every field by name, for sources.csv and the run record.

        Returns
        -------
        dict
            Field name -> value (units in the names).
        """
        return asdict(self)


def derive_emission(
    *,
    nh3_unabated_kg_yr: float | None = None,
    factor_nh3_kg_per_place_yr: float | None = None,
    places: float | None = None,
    reduction_percent: float = 0.0,
    treated_air_fraction: float = 1.0,
    effluent_kg_n_per_m3: float | None = None,
    captures_in_effluent: bool = False,
) -> EmissionDerivation:
    """Derive a source's annual emission and mean strength.

    Parameters
    ----------
    nh3_unabated_kg_yr : float, optional
        Direct annual emission before abatement [kg NH3 yr-1]; excludes factor/places.
    factor_nh3_kg_per_place_yr : float, optional
        Emission factor [kg NH3 (animal place)-1 yr-1], >= 0.
    places : float, optional
        Number of animal places, >= 0.
    reduction_percent : float
        Reduction by the abatement technique of the air (or emission) it treats [%], 0..100.
    treated_air_fraction : float
        Share of the house's ammonia passing the technique [-], 0..1.
    effluent_kg_n_per_m3 : float, optional
        Nitrogen content of the scrubber effluent [kg N m-3], > 0.
    captures_in_effluent : bool
        True for scrubbers (removed ammonia is captured as effluent nitrogen).

    Returns
    -------
    EmissionDerivation

    Raises
    ------
    ValueError
        On a negative figure, a reduction outside 0..100 or a share outside 0..1, or when both
        or neither of the direct figure and factor x places are given.
    """
    direct = nh3_unabated_kg_yr is not None
    derived = factor_nh3_kg_per_place_yr is not None or places is not None
    if direct == derived:
        raise ValueError("give either nh3_unabated_kg_yr or factor and places, not both/neither")
    if derived:
        if factor_nh3_kg_per_place_yr is None or places is None:
            raise ValueError("a derived emission needs both a factor and places")
        if factor_nh3_kg_per_place_yr < 0 or places < 0:
            raise ValueError("factor and places must be >= 0")
        nh3_unabated_kg_yr = factor_nh3_kg_per_place_yr * places
    if nh3_unabated_kg_yr < 0:
        raise ValueError(f"emission must be >= 0, got {nh3_unabated_kg_yr}")
    if not 0.0 <= reduction_percent <= 100.0:
        raise ValueError(f"reduction_percent must be in 0..100, got {reduction_percent}")
    if not 0.0 <= treated_air_fraction <= 1.0:
        raise ValueError(f"treated_air_fraction must be in 0..1, got {treated_air_fraction}")
    effective_percent = reduction_percent * treated_air_fraction
    nh3_kg_yr = nh3_unabated_kg_yr * (1.0 - effective_percent / 100.0)
    removed_kg_yr = nh3_unabated_kg_yr - nh3_kg_yr
    n_captured = removed_kg_yr * N_PER_NH3_MASS_RATIO if captures_in_effluent else None
    effluent_m3 = (
        n_captured / effluent_kg_n_per_m3
        if n_captured is not None and effluent_kg_n_per_m3
        else None
    )
    return EmissionDerivation(
        factor_nh3_kg_per_place_yr=factor_nh3_kg_per_place_yr,
        places=places,
        nh3_unabated_kg_yr=nh3_unabated_kg_yr,
        reduction_percent=reduction_percent,
        treated_air_fraction=treated_air_fraction,
        effective_reduction_percent=effective_percent,
        nh3_kg_yr=nh3_kg_yr,
        emission_g_s=kg_per_year_to_g_s(nh3_kg_yr),
        nh3_removed_kg_yr=removed_kg_yr,
        n_captured_kg_yr=n_captured,
        effluent_m3_yr=effluent_m3,
    )
