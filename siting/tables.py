"""Loaders of the config/ lookup tables.

Each table is a TOML file whose rows all carry a non-empty ``source``. A loader checks the keys,
types and ranges it relies on and names the file, the row and the key in any error. Tables are
read from the bundled config/ folder unless the caller passes another folder (a user may keep a
copy edited for their jurisdiction). No physics here: rows become plain dicts and small arrays.
"""

from __future__ import annotations

import difflib
import hashlib
import math
import tomllib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from siting.errors import InputError, InputFileError
from siting.plume import STABILITY_CLASSES, SigmaScheme
from siting.resources import config_dir

TABLE_FILES = {
    "emission_factors": ("emission_factors.toml", "factor"),
    "abatement": ("abatement.toml", "technique"),
    "critical_loads": ("critical_loads.toml", "habitat"),
    "critical_levels": ("critical_levels.toml", "level"),
    "deposition_velocities": ("deposition_velocities.toml", "land_cover"),
    "thresholds": ("thresholds.toml", "tier"),
    "dispersion": ("dispersion.toml", None),
}


def suggest(name: str, choices) -> str:
    """'; did you mean "x"?' for the closest choice, or an empty string."""
    close = difflib.get_close_matches(str(name), [str(c) for c in choices], n=1, cutoff=0.6)
    return f'; did you mean "{close[0]}"?' if close else ""


def _read_toml(path: Path) -> dict:
    try:
        with open(path, "rb") as handle:
            return tomllib.load(handle)
    except FileNotFoundError as exc:
        raise InputFileError(f"{path}: table not found") from exc
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: not valid TOML: {exc}") from exc


def _rows(path: Path, data: dict, key: str, required: dict[str, type]) -> list[dict]:
    rows = data.get(key)
    if not isinstance(rows, list) or not rows:
        raise InputError(f"{path.name}: expected one or more [[{key}]] rows")
    for i, row in enumerate(rows, start=1):
        where = f"{path.name}, [[{key}]] row {i}"
        if "id" in row or "livestock" in row:
            where += f' ("{row.get("id", row.get("livestock"))}")'
        for name, kind in required.items():
            if name not in row:
                raise InputError(f"{where}: missing key {name}")
            value = row[name]
            if kind is float and isinstance(value, int) and not isinstance(value, bool):
                value = row[name] = float(value)
            if not isinstance(value, kind):
                raise InputError(f"{where}: {name} must be {kind.__name__}, got {value!r}")
            if kind is float and not math.isfinite(value):
                raise InputError(f"{where}: {name} must be a finite number, got {value}")
            if kind is float and value < 0:
                raise InputError(f"{where}: {name} must be >= 0, got {value}")
        if not str(row.get("source", "")).strip():
            raise InputError(f"{where}: every row needs a non-empty source")
    return rows


@dataclass(frozen=True)
class Tables:
    """All lookup tables of a run, with the file each came from and its SHA-256."""

    folder: Path
    emission_factors: list[dict]
    abatement: dict[str, dict]
    critical_loads: dict[str, dict]
    critical_levels: dict[str, dict]
    deposition_velocities: dict[str, dict]
    thresholds: list[dict]
    dispersion: dict
    files_sha256: dict[str, str]
    #: emission_factors.toml [uncertainty]: {"emission_factor_percent", "source"}, or None
    emission_factor_uncertainty: dict | None = None

    def factor(self, livestock: str, housing: str, where: str) -> dict:
        """The emission-factor row for a livestock category and housing system."""
        categories = sorted({r["livestock"] for r in self.emission_factors})
        if livestock not in categories:
            raise InputError(f'{where}: unknown livestock "{livestock}"{suggest(livestock, categories)}'
                             f" (known: {', '.join(categories)})")
        systems = sorted(r["housing"] for r in self.emission_factors if r["livestock"] == livestock)
        for row in self.emission_factors:
            if row["livestock"] == livestock and row["housing"] == housing:
                return row
        raise InputError(f'{where}: unknown housing "{housing}" for {livestock}'
                         f"{suggest(housing, systems)} (known: {', '.join(systems)})")

    def technique(self, technique_id: str, where: str) -> dict:
        if technique_id not in self.abatement:
            raise InputError(f'{where}: unknown abatement "{technique_id}"'
                             f"{suggest(technique_id, self.abatement)}"
                             f" (known: {', '.join(sorted(self.abatement))})")
        return self.abatement[technique_id]

    def sigma_scheme(self, land_type: str, kind: str = "briggs") -> SigmaScheme:
        """Dispersion coefficients of this run's dispersion table."""
        return sigma_scheme(self.dispersion, land_type, kind)

    def wind_exponents(self, land_type: str) -> np.ndarray:
        """Power-law exponents A..F of this run's dispersion table."""
        return wind_exponents(self.dispersion, land_type)


def sigma_scheme(dispersion: dict, land_type: str, kind: str = "briggs") -> SigmaScheme:
    """Dispersion coefficients of a dispersion table as arrays for the physics.

    kind "briggs" takes the Briggs (1973) rows of ``land_type``; kind "pasquill_gifford" the
    rural Pasquill-Gifford curve fits.
    """
    if kind == "briggs":
        rows = {r["stability"]: r for r in dispersion["briggs"] if r["land_type"] == land_type}
        y = np.array([[rows[s]["sigma_y"][k] for k in "abc"] for s in STABILITY_CLASSES])
        z = np.array([[rows[s]["sigma_z"][k] for k in "abc"] for s in STABILITY_CLASSES])
        return SigmaScheme(f"briggs_{land_type}", "briggs", y, z)
    rows = {r["stability"]: r for r in dispersion["pasquill_gifford"]}
    y = np.array([[rows[s]["sigma_y"]["c"], rows[s]["sigma_y"]["d"]] for s in STABILITY_CLASSES])
    bands = tuple(tuple(map(tuple, rows[s]["sigma_z_bands"])) for s in STABILITY_CLASSES)
    return SigmaScheme("pasquill_gifford", "pasquill_gifford", y, z_bands=bands)


def wind_exponents(dispersion: dict, land_type: str) -> np.ndarray:
    """Power-law wind-profile exponents p for classes A..F."""
    rows = {r["stability"]: r for r in dispersion["wind_exponent"]}
    return np.array([float(rows[s][land_type]) for s in STABILITY_CLASSES])


def load_dispersion(folder: Path | None = None) -> dict:
    """The dispersion table alone (checked), for users of the physics without a scenario."""
    path = (Path(folder) if folder is not None else config_dir()) / TABLE_FILES["dispersion"][0]
    data = _read_toml(path)
    _check_dispersion(path, data)
    return data


def _check_dispersion(path: Path, data: dict) -> None:
    for key in ("briggs", "pasquill_gifford", "wind_exponent"):
        rows = data.get(key, [])
        for row in rows:
            if not str(row.get("source", "")).strip():
                raise InputError(f"{path.name}: a [[{key}]] row has no source")
    for land_type in ("rural", "urban"):
        have = {r["stability"] for r in data.get("briggs", []) if r.get("land_type") == land_type}
        if have != set(STABILITY_CLASSES):
            raise InputError(f"{path.name}: Briggs {land_type} rows must cover classes A-F, "
                             f"got {sorted(have)}")


def default_reduction_percent(technique: dict) -> float:
    """Reduction used when a scenario states none [%]: the lower end of the published range.

    The cautious reading of a range: a higher figure is the user's claim, to be stated with its
    basis (``reduction_percent`` with ``reduction_basis``) and checked by ``siting verify``.
    """
    return float(technique["reduction_percent_min"])


def is_claimed_reduction(reduction_percent: float | None, technique: dict) -> bool:
    """Whether a stated reduction lies above the range's lower end: the user's claim, shown with
    its basis and raised by ``siting verify`` (None, no stated figure, is no claim)."""
    return reduction_percent is not None and reduction_percent > default_reduction_percent(technique)


def load_tables(folder: Path | None = None) -> Tables:
    """Read and check every lookup table from ``folder`` (default: the bundled config/)."""
    folder = Path(folder) if folder is not None else config_dir()
    data, hashes = {}, {}
    for name, (filename, _) in TABLE_FILES.items():
        path = folder / filename
        if not path.is_file():
            raise InputFileError(f"{path}: lookup table not found")
        hashes[filename] = hashlib.sha256(path.read_bytes()).hexdigest()
        data[name] = (_read_toml(path), path)

    def rows(name, required):
        raw, path = data[name]
        return _rows(path, raw, TABLE_FILES[name][1], required)

    factors = rows("emission_factors", {"livestock": str, "housing": str,
                                        "nh3_kg_per_place_yr": float})
    abatement = rows("abatement", {"id": str, "name": str, "kind": str,
                                   "reduction_percent_min": float,
                                   "reduction_percent_max": float})
    for row in abatement:
        # the typical reported figure is for information only (reports, appraisal); the
        # figure used when a scenario states none is the range's lower end. Older tables
        # named it reduction_percent_default.
        if "reduction_percent_typical" not in row and "reduction_percent_default" in row:
            row["reduction_percent_typical"] = row.pop("reduction_percent_default")
        lo, hi = row["reduction_percent_min"], row["reduction_percent_max"]
        mid = row.setdefault("reduction_percent_typical", lo)
        if not isinstance(mid, (int, float)) or isinstance(mid, bool):
            raise InputError(f'abatement.toml, technique "{row["id"]}": '
                             f"reduction_percent_typical must be a number, got {mid!r}")
        if not lo <= mid <= hi <= 100:
            raise InputError(f'abatement.toml, technique "{row["id"]}": need min <= typical <= '
                             f"max <= 100, got {lo}, {mid}, {hi}")
    loads = rows("critical_loads", {"id": str, "name": str,
                                    "critical_load_min_kg_n_ha_yr": float,
                                    "critical_load_max_kg_n_ha_yr": float,
                                    "land_cover": str, "lichens_bryophytes": bool})
    levels = rows("critical_levels", {"id": str, "critical_level_ug_m3": float})
    velocities = rows("deposition_velocities", {"id": str, "deposition_velocity_m_s": float,
                                                "deposition_velocity_min_m_s": float,
                                                "deposition_velocity_max_m_s": float})
    tiers = rows("thresholds", {"id": str, "threshold_percent": float, "designations": list})
    for row in loads:
        where = f'critical_loads.toml, habitat "{row["id"]}"'
        for key in ("critical_load_min_kg_n_ha_yr", "critical_load_max_kg_n_ha_yr"):
            if not 0 < row[key] < math.inf:
                raise InputError(f"{where}: {key} must be a positive finite number, got {row[key]}")
        if row["critical_load_min_kg_n_ha_yr"] > row["critical_load_max_kg_n_ha_yr"]:
            raise InputError(f"{where}: critical_load_min_kg_n_ha_yr is above the max")
        review = [k for k in ("critical_load_2022_min_kg_n_ha_yr",
                              "critical_load_2022_max_kg_n_ha_yr", "source_2022") if k in row]
        if review:  # the 2022 review's range: all three keys or none
            if len(review) != 3:
                missing = sorted({"critical_load_2022_min_kg_n_ha_yr",
                                  "critical_load_2022_max_kg_n_ha_yr", "source_2022"} - set(review))
                raise InputError(f"{where}: missing key {', '.join(missing)} (the 2022 range "
                                 "needs its min, max and source_2022)")
            lo, hi = row["critical_load_2022_min_kg_n_ha_yr"], row["critical_load_2022_max_kg_n_ha_yr"]
            if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in (lo, hi)):
                raise InputError(f"{where}: the 2022 range must be numbers, got {lo!r}, {hi!r}")
            if not 0 < lo <= hi < math.inf:
                raise InputError(f"{where}: need 0 < critical_load_2022_min <= max, got {lo}, {hi}")
            row["critical_load_2022_min_kg_n_ha_yr"], row["critical_load_2022_max_kg_n_ha_yr"] = (
                float(lo), float(hi))
            if not str(row["source_2022"]).strip():
                raise InputError(f"{where}: source_2022 must not be empty")
    land_covers = {r["id"] for r in velocities}
    for row in loads:
        if row["land_cover"] not in land_covers:
            raise InputError(f'critical_loads.toml, habitat "{row["id"]}": land_cover '
                             f'"{row["land_cover"]}" is not in deposition_velocities.toml')
    for needed in ("lichens_bryophytes", "higher_plants"):
        if needed not in {r["id"] for r in levels}:
            raise InputError(f'critical_levels.toml: missing level "{needed}"')
    uncertainty = data["emission_factors"][0].get("uncertainty")
    if uncertainty is not None:
        where = "emission_factors.toml, [uncertainty]"
        value = uncertainty.get("emission_factor_percent") if isinstance(uncertainty, dict) else None
        if (not isinstance(value, (int, float)) or isinstance(value, bool)
                or not 0 < value < 100):
            raise InputError(f"{where}: emission_factor_percent must be a number in (0, 100), "
                             f"got {value!r}")
        if not str(uncertainty.get("source", "")).strip():
            raise InputError(f"{where}: needs a non-empty source")
        uncertainty = {"emission_factor_percent": float(value), "source": uncertainty["source"]}
    dispersion, dispersion_path = data["dispersion"]
    _check_dispersion(dispersion_path, dispersion)
    return Tables(
        folder=folder,
        emission_factors=factors,
        abatement={r["id"]: r for r in abatement},
        critical_loads={r["id"]: r for r in loads},
        critical_levels={r["id"]: r for r in levels},
        deposition_velocities={r["id"]: r for r in velocities},
        thresholds=tiers,
        dispersion=dispersion,
        files_sha256=hashes,
        emission_factor_uncertainty=uncertainty,
    )
