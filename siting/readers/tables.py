"""Loaders of the config/ lookup tables.

Each table is a TOML file whose rows all carry a non-empty ``source``. Its shape (sections,
keys, types, ranges, finite numbers) is checked by the pydantic models of table_schema.py, which
name the file, the row and the key in any error; here only the checks across tables. Tables are
read from the bundled config/ folder unless the caller passes another folder (a user may keep a
copy edited for their jurisdiction). No physics here: rows become plain dicts and small arrays.

abatement_appraisal.toml (the abatement appraisal's costs and ventilation rates) is read when
the folder has it: a user's copy of config/ made before it existed still screens, its sources
then left unappraised (``Tables.abatement_appraisal`` None, nothing recorded for it).
"""

from __future__ import annotations

import difflib
import hashlib
import tomllib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from siting.errors import InputError, InputFileError
from siting.physics.plume import STABILITY_CLASSES, SigmaScheme
from siting.readers.resources import config_dir
from siting.readers.table_appraisal import APPRAISAL_FILE
from siting.readers.table_schema import validate_table

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
    """'; did you mean "x"?' for the closest choice, or an empty string.

    Parameters
    ----------
    name : str
        What the user wrote.
    choices : iterable
        The known names.

    Returns
    -------
    str
        The suggestion, ready to append to a message; "" when nothing is close.
    """
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


@dataclass(frozen=True)
class Tables:
    """All lookup tables of a run, with the file each came from and its SHA-256.

    Attributes
    ----------
    folder : Path
        The folder the tables were read from.
    emission_factors : list of dict
        Rows of emission_factors.toml [[factor]].
    abatement : dict of str to dict
        Rows of abatement.toml by technique id.
    critical_loads : dict of str to dict
        Rows of critical_loads.toml by habitat id.
    critical_levels : dict of str to dict
        Rows of critical_levels.toml by id.
    deposition_velocities : dict of str to dict
        Rows of deposition_velocities.toml by land-cover id.
    thresholds : list of dict
        Rows of thresholds.toml [[tier]].
    dispersion : dict
        dispersion.toml, checked.
    files_sha256 : dict of str to str
        SHA-256 of each table file, by file name.
    emission_factor_uncertainty : dict, optional
        emission_factors.toml [uncertainty]: {"emission_factor_percent", "source"}, or None.
    abatement_appraisal : dict, optional
        abatement_appraisal.toml, checked: {"technique": rows by technique id (each with its
        ``kind``, "scrubber" or "housing_measure"), "ventilation": rows by livestock id}; None
        when the folder has no such file.
    """

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
    #: abatement_appraisal.toml: {"technique": {id: row}, "ventilation": {livestock: row}}
    abatement_appraisal: dict | None = None

    def factor(self, livestock: str, housing: str, where: str) -> dict:
        """The emission-factor row for a livestock category and housing system.

        Parameters
        ----------
        livestock, housing : str
            The category and system, as a scenario names them.
        where : str
            Names the source in messages.

        Returns
        -------
        dict
            The [[factor]] row (``nh3_kg_per_place_yr`` [kg NH3 place-1 yr-1], source).

        Raises
        ------
        InputError
            Unknown livestock, or a housing system not listed for it (with a suggestion).
        """
        categories = sorted({r["livestock"] for r in self.emission_factors})
        if livestock not in categories:
            raise InputError(
                f'{where}: unknown livestock "{livestock}"{suggest(livestock, categories)}'
                f" (known: {', '.join(categories)})"
            )
        systems = sorted(r["housing"] for r in self.emission_factors if r["livestock"] == livestock)
        for row in self.emission_factors:
            if row["livestock"] == livestock and row["housing"] == housing:
                return row
        raise InputError(
            f'{where}: unknown housing "{housing}" for {livestock}'
            f"{suggest(housing, systems)} (known: {', '.join(systems)})"
        )

    def technique(self, technique_id: str, where: str) -> dict:
        """The abatement row of a technique id.

        Parameters
        ----------
        technique_id : str
            As a scenario names it.
        where : str
            Names the source in messages.

        Returns
        -------
        dict
            The [[technique]] row (reduction range [%], kind, source).

        Raises
        ------
        InputError
            Unknown technique (with a suggestion).
        """
        if technique_id not in self.abatement:
            raise InputError(
                f'{where}: unknown abatement "{technique_id}"'
                f"{suggest(technique_id, self.abatement)}"
                f" (known: {', '.join(sorted(self.abatement))})"
            )
        return self.abatement[technique_id]

    def sigma_scheme(self, land_type: str, kind: str = "briggs") -> SigmaScheme:
        """Dispersion coefficients of this run's dispersion table.

        Parameters
        ----------
        land_type : {"rural", "urban"}
            The land type.
        kind : {"briggs", "pasquill_gifford"}
            The formulas.

        Returns
        -------
        SigmaScheme
            As :func:`sigma_scheme` gives it.
        """
        return sigma_scheme(self.dispersion, land_type, kind)

    def wind_exponents(self, land_type: str) -> np.ndarray:
        """Power-law exponents A..F of this run's dispersion table.

        Parameters
        ----------
        land_type : {"rural", "urban"}
            The land type.

        Returns
        -------
        ndarray, (6,)
            The exponents p [-].
        """
        return wind_exponents(self.dispersion, land_type)


def sigma_scheme(dispersion: dict, land_type: str, kind: str = "briggs") -> SigmaScheme:
    """Dispersion coefficients of a dispersion table as arrays for the physics.

    kind "briggs" takes the Briggs (1973) rows of ``land_type``; kind "pasquill_gifford" the
    rural Pasquill-Gifford curve fits.

    Parameters
    ----------
    dispersion : dict
        A checked dispersion table (:func:`load_dispersion`).
    land_type : {"rural", "urban"}
        The land type (Briggs only).
    kind : {"briggs", "pasquill_gifford"}
        The formulas.

    Returns
    -------
    SigmaScheme
        The coefficients per class A..F.
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
    """Power-law wind-profile exponents p for classes A..F.

    Parameters
    ----------
    dispersion : dict
        A checked dispersion table.
    land_type : {"rural", "urban"}
        The land type.

    Returns
    -------
    ndarray, (6,)
        The exponents p [-].
    """
    rows = {r["stability"]: r for r in dispersion["wind_exponent"]}
    return np.array([float(rows[s][land_type]) for s in STABILITY_CLASSES])


def load_dispersion(folder: Path | None = None) -> dict:
    """The dispersion table alone (checked), for users of the physics without a scenario.

    Parameters
    ----------
    folder : Path, optional
        A folder holding dispersion.toml; default the bundled config/.

    Returns
    -------
    dict
        The checked table (:func:`siting.readers.table_schema.validate_table`).

    Raises
    ------
    InputFileError
        dispersion.toml is missing.
    InputError
        The table is not valid TOML or fails its checks.
    """
    path = (Path(folder) if folder is not None else config_dir()) / TABLE_FILES["dispersion"][0]
    return validate_table("dispersion", _read_toml(path), path.name)


def default_reduction_percent(technique: dict) -> float:
    """Reduction used when a scenario states none [%]: the lower end of the published range.

    The cautious reading of a range: a higher figure is the user's claim, to be stated with its
    basis (``reduction_percent`` with ``reduction_basis``) and checked by ``siting verify``.

    Parameters
    ----------
    technique : dict
        The technique's row of abatement.toml.

    Returns
    -------
    float
        ``reduction_percent_min`` [%].
    """
    return float(technique["reduction_percent_min"])


def is_claimed_reduction(reduction_percent: float | None, technique: dict) -> bool:
    """Whether a stated reduction lies above the range's lower end.

    Such a figure is the user's claim, shown with its basis and raised by ``siting verify``
    (None, no stated figure, is no claim).

    Parameters
    ----------
    reduction_percent : float or None
        The scenario's reduction [%], or None.
    technique : dict
        The technique's row of abatement.toml.

    Returns
    -------
    bool
        True for a figure above the range's lower end.
    """
    return reduction_percent is not None and reduction_percent > default_reduction_percent(
        technique
    )


def load_tables(folder: Path | None = None) -> Tables:
    """Read and check every lookup table from ``folder`` (default: the bundled config/).

    Parameters
    ----------
    folder : Path, optional
        A folder holding all seven tables (and abatement_appraisal.toml, read when there);
        default the bundled config/.

    Returns
    -------
    Tables
        Every table checked, with the SHA-256 of its file.

    Raises
    ------
    InputFileError
        A table file is missing.
    InputError
        A table fails its checks, or the tables disagree (a habitat's land cover without a
        deposition velocity, a missing critical level, an appraisal row for a technique or
        livestock the other tables do not have).
    """
    folder = Path(folder) if folder is not None else config_dir()
    data, hashes = {}, {}
    for name, (filename, _) in TABLE_FILES.items():
        path = folder / filename
        if not path.is_file():
            raise InputFileError(f"{path}: lookup table not found")
        hashes[filename] = hashlib.sha256(path.read_bytes()).hexdigest()
        data[name] = (_read_toml(path), path)

    checked = {name: validate_table(name, raw, path.name) for name, (raw, path) in data.items()}
    factors = checked["emission_factors"]["factor"]
    loads = checked["critical_loads"]["habitat"]
    levels = checked["critical_levels"]["level"]
    velocities = checked["deposition_velocities"]["land_cover"]
    land_covers = {r["id"] for r in velocities}
    for i, row in enumerate(loads, start=1):
        if row["land_cover"] not in land_covers:
            raise InputError(
                f'critical_loads.toml, [[habitat]] row {i} ("{row["id"]}"): '
                f'land_cover "{row["land_cover"]}" is not in '
                f"deposition_velocities.toml{suggest(row['land_cover'], land_covers)}"
            )
    for needed in ("lichens_bryophytes", "higher_plants"):
        if needed not in {r["id"] for r in levels}:
            raise InputError(
                f'critical_levels.toml: missing level "{needed}" (a [[level]] row '
                f'with id = "{needed}")'
            )
    return Tables(
        folder=folder,
        emission_factors=factors,
        abatement={r["id"]: r for r in checked["abatement"]["technique"]},
        critical_loads={r["id"]: r for r in loads},
        critical_levels={r["id"]: r for r in levels},
        deposition_velocities={r["id"]: r for r in velocities},
        thresholds=checked["thresholds"]["tier"],
        dispersion=checked["dispersion"],
        files_sha256=hashes,
        emission_factor_uncertainty=checked["emission_factors"].get("uncertainty"),
        abatement_appraisal=_load_appraisal(folder, hashes, checked),
    )


def _load_appraisal(folder: Path, hashes: dict, checked: dict) -> dict | None:
    """abatement_appraisal.toml of ``folder`` checked, against abatement.toml and
    emission_factors.toml too, its hash added to ``hashes``; None when the folder has none."""
    path = folder / APPRAISAL_FILE
    if not path.is_file():
        return None
    hashes[APPRAISAL_FILE] = hashlib.sha256(path.read_bytes()).hexdigest()
    table = validate_table("abatement_appraisal", _read_toml(path), path.name)
    kinds = {r["id"]: r["kind"] for r in checked["abatement"]["technique"]}
    livestock = {r["livestock"] for r in checked["emission_factors"]["factor"]}
    techniques = {}
    for section in ("scrubber", "housing_measure"):
        for i, row in enumerate(table[section], start=1):
            where = f'{path.name}, [[{section}]] row {i} ("{row["id"]}")'
            if row["id"] not in kinds:
                raise InputError(
                    f'{where}: technique "{row["id"]}" is not in abatement.toml'
                    f"{suggest(row['id'], kinds)}"
                )
            if kinds[row["id"]] != section:
                raise InputError(
                    f'{where}: abatement.toml gives "{row["id"]}" kind "{kinds[row["id"]]}"; '
                    f"move the row to [[{kinds[row['id']]}]]"
                )
            techniques[row["id"]] = {**row, "kind": section}
    for i, row in enumerate(table["ventilation"], start=1):
        if row["livestock"] not in livestock:
            raise InputError(
                f'{path.name}, [[ventilation]] row {i} ("{row["livestock"]}"): livestock '
                f'"{row["livestock"]}" is not in emission_factors.toml'
                f"{suggest(row['livestock'], livestock)}"
            )
    return {
        "technique": techniques,
        "ventilation": {r["livestock"]: r for r in table["ventilation"]},
    }
