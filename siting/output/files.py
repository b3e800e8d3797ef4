"""Writing a screening run's outputs: tables, GeoTIFFs, run.json, report and map.

An adapter. Everything is written into a temporary folder beside the target and moved into
place only when complete, so a failed run leaves nothing half-written and an earlier result is
replaced only with ``overwrite`` (and only once the new one is whole). That staging is
:func:`staged_folder`, which ``siting weather`` (``weather_outputs.write_weather_outputs``) uses
too.
"""

from __future__ import annotations

import glob
import hashlib
import json
import os
import platform
import secrets
import shutil
import time
from collections.abc import Iterator
from contextlib import contextmanager
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pandas as pd

from siting.errors import OutputExistsError
from siting.output.grids import write_geotiff

SITE_COLUMNS = [
    "site_id",
    "name",
    "designation",
    "tier",
    "habitat",
    "habitat_name",
    "area_ha",
    "land_cover",
    "deposition_velocity_m_s",
    "distance_m",
    "critical_level_ug_m3",
    "critical_level_basis",
    "critical_level_source",
    "critical_load_review",
    "critical_load_min_kg_n_ha_yr",
    "critical_load_max_kg_n_ha_yr",
    "critical_load_used_kg_n_ha_yr",
    "critical_load_source",
    "threshold_percent",
    "threshold_source",
    "assessed",
    "pc_conc_max_ug_m3",
    "pc_conc_mean_ug_m3",
    "pc_dep_max_kg_n_ha_yr",
    "pc_dep_mean_kg_n_ha_yr",
    "pc_dep_max_mol_n_ha_yr",
    "pc_dep_max_keq_ha_yr",
    "pc_pct_level",
    "pc_pct_load",
    "net_conc_max_ug_m3",
    "net_dep_max_kg_n_ha_yr",
    "net_pct_level",
    "net_pct_load",
    "incomb_conc_max_ug_m3",
    "incomb_dep_max_kg_n_ha_yr",
    "incomb_pct_level",
    "incomb_pct_load",
    "background_conc_ug_m3",
    "background_dep_kg_n_ha_yr",
    "pec_conc_ug_m3",
    "pec_dep_kg_n_ha_yr",
    "pec_pct_level",
    "pec_pct_load",
    "verdict",
]

#: Written beside the depleted figures when plume depletion is switched on: what depletion took off.
UNDEPLETED_COLUMNS = [
    "pc_conc_max_undepleted_ug_m3",
    "pc_dep_max_undepleted_kg_n_ha_yr",
    "pc_pct_level_undepleted",
    "pc_pct_load_undepleted",
]

#: A text cell starting with one of these is taken for a formula by spreadsheet programs.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
#: Said once in the report (method notes) and the README.
CSV_TEXT_NOTE = (
    "In the CSV tables a text cell that would begin with = + - @ (a site name, say) "
    "is written with a leading apostrophe, so a spreadsheet shows it as text and "
    "never evaluates it as a formula."
)


METHOD_NOTES = [
    "Emission = factor [kg NH3/place/yr] x places, or a figure given directly; less abatement: "
    "effective reduction = technique reduction x share of the house's ammonia treated. With no "
    "stated reduction the lower end of the technique's published range is used; a higher "
    "figure is the user's claim, shown with its stated basis.",
    "Dispersion: ground-reflected Gaussian plume, sector-averaged over the weather frequency "
    "table (long-term annual mean), Briggs (1973) dispersion coefficients for the chosen land "
    "type, power-law wind profile by stability class (Irwin 1979 exponents) taken from the "
    "anemometer down to each release height (lowest 1 m by default, then the minimum wind "
    "speed), optional reflection at a mixing lid. Values are interpolated linearly in angle "
    "between sector centre lines; an hourly record's directions are spread over the interval "
    "they were reported in.",
    "Plume rise (Briggs momentum rise) only for an outlet at or above the good-engineering-"
    "practice height of its building, Hb + 1.5 min(Hb, W) (US EPA 1985); an outlet below it, "
    "or without building dimensions, is in the building wake and gets none. Stack-tip downwash "
    "(Briggs 1974) lowers an outlet whose exit velocity is below 1.5 times the wind speed. "
    "Houses as volume sources use initial spreads side/4.3 and building height/2.15 with the "
    "virtual-distance method (US EPA 1992, 1995); area sources are integrated over a lattice of "
    "small elements.",
    "Dry deposition = deposition velocity x ground-level concentration, velocity by land cover "
    "(short vegetation or woodland); plume depletion by the source-depletion method "
    "(Chamberlain) only when switched on (off by default), using the short-vegetation velocity "
    "along the path; the undepleted figures are then shown beside.",
    "Critical level 1 ug/m3 at every site unless lichens and bryophytes are stated absent "
    "(UNECE 2007); critical loads of the 2022 review (Bobbink et al. 2022; ranges from memory, "
    "see config/critical_loads.toml) at the lower end by default.",
    "Site figures: maximum over receptor points on the site (boundary points nearest each "
    "source, an interior lattice, grid nodes inside) and mean over its interior points. "
    "PC = proposed + existing sources; net change = proposed - removed; in-combination = PC + "
    "other; predicted environmental total = background + PC.",
    CSV_TEXT_NOTE,
    "Verdict: 'below threshold' when the PC is at or under the screening threshold of the site's "
    "designation tier as a % of both the critical level and the critical load; otherwise "
    "'above threshold' (further assessment needed).",
]


def sha256_of(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


#: Written into every output folder siting makes (by staged_folder): only a folder holding it
#: (or the run record of an older version) may be replaced with --overwrite.
OUTPUT_MARKER = ".siting-output"
#: Run records by which folders of versions before the marker are recognised.
_LEGACY_RECORDS = (
    ("run.json", "inputs"),
    ("findings.json", "findings"),
    ("summary.json", "hours_used"),
)


def is_siting_output(folder: Path) -> bool:
    """Whether ``folder`` is an output folder written by siting (its marker or run record)."""
    folder = Path(folder)
    if (folder / OUTPUT_MARKER).is_file():
        return True
    for name, key in _LEGACY_RECORDS:
        try:
            record = json.loads((folder / name).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue
        if isinstance(record, dict) and key in record:
            return True
    return False


#: Free space asked for any output folder beyond its own estimate [bytes]: the page assets,
#: report and tables of a small run (common practice, no source).
MIN_FREE_BYTES = 20_000_000


#: Longest output folder name [bytes]: a file name may have 255, and the staging folder beside
#: it is named ".<name>.<8 hex>.partial" (18 more).
MAX_NAME_BYTES = 255 - 18


def _lock_path(out_dir: Path) -> Path:
    return out_dir.parent / f".{out_dir.name}.lock"


def _lock_owner(out_dir: Path):
    """The process id of a run of this machine writing ``out_dir`` now, else None (a lock
    left by a dead run does not count)."""
    pid = _recorded_pid(_lock_path(out_dir))
    return pid if pid is not None and pid != os.getpid() and _alive(pid) else None


def _busy_message(out_dir: Path, pid) -> str:
    return (
        f"{out_dir}: another siting run (process {pid}) is writing this folder now; wait "
        "for it to finish or choose another --out"
    )


@contextmanager
def _writing_lock(out_dir: Path) -> Iterator[None]:
    """Hold ``.<name>.lock`` beside ``out_dir`` while writing it: a second run into the same
    folder stops with OutputExistsError instead of racing the first (created atomically with
    O_EXCL; a lock whose run is gone is taken over)."""
    lock = _lock_path(out_dir)
    body = json.dumps({"written_by": "siting", "pid": os.getpid()}).encode("utf-8")
    for _ in range(2):
        try:
            fd = os.open(lock, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        except FileExistsError:
            pid = _lock_owner(out_dir)
            if pid is not None:
                raise OutputExistsError(_busy_message(out_dir, pid)) from None
            lock.unlink(missing_ok=True)  # a dead run's lock
            continue
        with os.fdopen(fd, "wb") as handle:
            handle.write(body)
        break
    else:
        raise OutputExistsError(_busy_message(out_dir, "unknown"))
    try:
        yield
    finally:
        lock.unlink(missing_ok=True)


def _check_space(folder: Path, need_bytes: int, out_dir: Path) -> None:
    try:
        free = shutil.disk_usage(folder).free
    except OSError:
        return  # unknown: the write itself will tell
    need = int(need_bytes) + MIN_FREE_BYTES
    if free < need:
        raise OutputExistsError(
            f"{out_dir}: not enough free space in {folder} (about "
            f"{need / 1e6:,.0f} MB needed, {free / 1e6:,.0f} MB free); "
            "free some space or choose another --out"
        )


def check_output_dir(out_dir: Path, overwrite: bool, inputs=(), need_bytes: int = 0) -> None:
    """Refuse early (before any work) an output folder that must not be written or replaced.

    It must not exist, unless ``overwrite`` is given; and then only a folder siting wrote
    (:func:`is_siting_output`) is replaced, never the current folder or one of its parents,
    and never one that holds any of the run's ``inputs`` (paths). Its parent must be a folder
    we may write in, with room for ``need_bytes`` (the run's estimate) plus MIN_FREE_BYTES,
    and no other run may be writing it now. Each refusal names why.
    """
    out_dir = Path(out_dir).resolve()
    size = len(out_dir.name.encode("utf-8"))
    if size > MAX_NAME_BYTES:
        raise OutputExistsError(
            f"{out_dir.name[:40]}...: output folder name is too long "
            f"({size} bytes; at most {MAX_NAME_BYTES}, which leaves room for "
            "the staging folder's name beside it); choose a shorter --out"
        )
    recover_interrupted(out_dir)
    pid = _lock_owner(out_dir)
    if pid is not None:
        raise OutputExistsError(_busy_message(out_dir, pid))
    if not out_dir.exists():
        parent = out_dir.parent
        while not parent.exists():
            parent = parent.parent
        if not parent.is_dir():
            raise OutputExistsError(f"{out_dir}: {parent} is a file, not a folder")
        if not os.access(parent, os.W_OK | os.X_OK):
            raise OutputExistsError(
                f"{out_dir}: cannot write in {parent} (no permission); choose another --out"
            )
        _check_space(parent, need_bytes, out_dir)
        return
    if not os.access(out_dir.parent, os.W_OK | os.X_OK):
        raise OutputExistsError(
            f"{out_dir}: cannot write in {out_dir.parent} (no permission); choose another --out"
        )
    if not overwrite:
        raise OutputExistsError(f"{out_dir}: output folder exists; pass --overwrite to replace it")
    if not out_dir.is_dir():
        raise OutputExistsError(f"{out_dir}: exists and is not a folder")
    cwd = Path.cwd().resolve()
    if out_dir == cwd or out_dir in cwd.parents:
        raise OutputExistsError(
            f"{out_dir}: is the current folder or one of its parents; "
            "--overwrite never replaces it: choose a new --out folder"
        )
    for path in inputs:
        if path is None:
            continue
        resolved = Path(path).resolve()
        if resolved == out_dir or out_dir in resolved.parents:
            raise OutputExistsError(
                f"{out_dir}: holds an input of this run ({resolved.name}); "
                "--overwrite never replaces it: choose another --out folder"
            )
    if not is_siting_output(out_dir):
        raise OutputExistsError(
            f"{out_dir}: is not a folder siting wrote (no {OUTPUT_MARKER} "
            "or run record in it); --overwrite replaces only siting's own "
            "output folders: choose another --out folder"
        )
    _check_space(out_dir.parent, need_bytes, out_dir)  # the old result stays until the swap


def _alive(pid) -> bool:
    """Whether a process of this machine with that id still runs (unknown counts as alive)."""
    if not isinstance(pid, int) or pid <= 0:
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists, but not ours
        return True
    return True


def _recorded_pid(path: Path):
    """The process id a lock or marker file records ({"pid": ...}), None if unreadable."""
    try:
        return json.loads(path.read_text(encoding="utf-8")).get("pid")
    except (OSError, ValueError, AttributeError):
        return None


def _staging_pid(staging: Path):
    return _recorded_pid(staging / OUTPUT_MARKER)


#: A staging folder without its marker (a run killed within moments of making it) counts as
#: dead once it is this old [s] (common practice, no source).
UNMARKED_STAGING_STALE_S = 600


def _dead_staging(partial: Path) -> bool:
    pid = _staging_pid(partial)
    if pid is None and not (partial / OUTPUT_MARKER).exists():
        try:
            return time.time() - partial.stat().st_mtime > UNMARKED_STAGING_STALE_S
        except OSError:
            return False
    return not _alive(pid)


def recover_interrupted(out_dir: Path) -> list[str]:
    """Tidy what a run killed while writing ``out_dir`` left beside it; what was done, in words.

    A staging folder (``.<name>.<random>.partial``) whose run is gone is deleted. A backup of
    the previous result (``.<name>.<random>.old``) whose run is gone is put back as ``out_dir``
    when the swap never finished (``out_dir`` missing), else deleted (the new result is in
    place). Folders of runs still going are left alone.
    """
    out_dir = Path(out_dir)
    parent = out_dir.parent
    done: list[str] = []
    if not parent.is_dir():
        return done
    lock = _lock_path(out_dir)
    if lock.is_file() and _lock_owner(out_dir) is None and _recorded_pid(lock) != os.getpid():
        lock.unlink(missing_ok=True)
        done.append(f"{lock}: removed the lock of an interrupted run")
    prefix = f".{out_dir.name}."
    for partial in sorted(parent.glob(f"{glob.escape(prefix)}*.partial")):
        if partial.is_dir() and _dead_staging(partial):
            backup = partial.with_name(partial.name.removesuffix(".partial") + ".old")
            if backup.is_dir() and not out_dir.exists():
                backup.rename(out_dir)
                done.append(f"{out_dir}: put back the previous result from an interrupted run")
            shutil.rmtree(partial, ignore_errors=True)
            done.append(f"{partial}: removed the staging folder of an interrupted run")
    for backup in sorted(parent.glob(f"{glob.escape(prefix)}*.old")):
        partial = backup.with_name(backup.name.removesuffix(".old") + ".partial")
        if not backup.is_dir() or partial.exists():
            continue  # its run is still writing (or was handled above)
        if not out_dir.exists():
            backup.rename(out_dir)
            done.append(f"{out_dir}: put back the previous result from an interrupted run")
        elif not _alive(_staging_pid(out_dir)):
            shutil.rmtree(backup, ignore_errors=True)
            done.append(f"{backup}: removed the backup left by an interrupted run")
    return done


def input_paths(scenario, holding: bool = False) -> list[Path]:
    """Every file a scenario run reads (for :func:`check_output_dir`), config tables included."""
    paths = list(_input_files(scenario, holding).values())
    if scenario.assessment.config_dir is not None:
        paths.append(scenario.assessment.config_dir)
    return paths


def _layer_files(key: str, path: Path) -> dict[str, Path]:
    """A vector layer's files: a shapefile is several (same stem), anything else one."""
    if path.suffix.lower() == ".shp":
        return {
            f"{key}{sidecar.suffix}": sidecar
            for sidecar in sorted(path.parent.glob(path.stem + ".*"))
        }
    return {key: path}


def _input_files(scenario, holding: bool = False) -> dict[str, Path]:
    """Every file a run reads, by a short key (scenario, weather, habitats, ...); the holding
    layers only for a placement search (``holding``)."""
    files = {"scenario": scenario.path}
    if scenario.weather.hourly is not None:
        hourly = scenario.weather.hourly
        for i, path in enumerate(hourly if isinstance(hourly, list) else [hourly], start=1):
            files["weather" if i == 1 else f"weather_{i}"] = path
    else:
        files["weather"] = scenario.weather.frequency_table
    files.update(_layer_files("habitats", scenario.habitats.file))
    if scenario.receptors is not None:
        files["receptors"] = scenario.receptors.file
    if holding and scenario.holding is not None:
        files.update(_layer_files("holding", scenario.holding.file))
        for i, ex in enumerate(scenario.holding.exclusion, start=1):
            files.update(_layer_files(f"exclusion_{i}", ex.file))
    return files


def run_record_base(run, run_time: str, holding: bool = False) -> dict:
    """The part of run.json every command shares: inputs and tables with SHA-256, parameters,
    weather summary, cautions and versions. ``run`` has .scenario, .tables, .weather_summary,
    .cautions (a ScreenResult or a screen.Prepared)."""
    import folium
    import geopandas
    import rasterio
    import shapely

    from siting._version import __version__

    inputs = {
        key: {"path": str(path), "sha256": sha256_of(path)}
        for key, path in _input_files(run.scenario, holding).items()
        if path is not None
    }
    tables = {
        name: {"path": str(run.tables.folder / name), "sha256": digest}
        for name, digest in run.tables.files_sha256.items()
    }
    return {
        "tool": "siting",
        "version": __version__,
        "run_time_utc": run_time,
        "title": run.scenario.title,
        "inputs": inputs,
        "config_tables": tables,
        "parameters": json.loads(run.scenario.model_dump_json(by_alias=True)),
        "weather_summary": run.weather_summary,
        "cautions": list(run.cautions),
        "versions": {
            "python": platform.python_version(),
            "numpy": np.__version__,
            "pandas": pd.__version__,
            "geopandas": geopandas.__version__,
            "shapely": shapely.__version__,
            "rasterio": rasterio.__version__,
            "folium": folium.__version__,
        },
    }


PACKAGE_FOLDER = "inputs"
PACKAGE_CONFIG = "_config"
PACKAGE_EXTERNAL = "_external"


def package_inputs(run, folder: Path) -> dict:
    """Copy every input of a run under ``folder/inputs`` so the output folder stands alone.

    Files inside the scenario's folder keep their path relative to it (so the copied scenario
    finds them unchanged); files elsewhere go to ``inputs/_external/<key>/``; the config tables
    used go to ``inputs/_config/``. The holding layers are packed whenever the scenario names
    them (the packed scenario must load), though only a placement run hashes them in run.json's
    inputs. Returns the package map written into run.json:
    {"files": {key: path under inputs/}, "config": "_config"}.
    """
    import shutil

    scenario = run.scenario
    base = scenario.folder.resolve()
    package = folder / PACKAGE_FOLDER
    files = {}
    for key, path in _input_files(scenario, holding=True).items():
        if path is None:
            continue
        path = Path(path).resolve()
        try:
            relative = path.relative_to(base)
        except ValueError:
            relative = Path(PACKAGE_EXTERNAL) / key / path.name
        target = package / relative
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(path, target)
        files[key] = relative.as_posix()
    config = package / PACKAGE_CONFIG
    config.mkdir(parents=True, exist_ok=True)
    for name in run.tables.files_sha256:
        shutil.copy2(run.tables.folder / name, config / name)
    return {"files": files, "config": PACKAGE_CONFIG}


def run_record(result, run_time: str) -> dict:
    """What a screening run's run.json holds: the shared part plus grid, timings, warnings."""
    record = run_record_base(result, run_time)
    record.update(
        {
            "grid": {
                "west_m": result.grid.west_m,
                "north_m": result.grid.north_m,
                "cell_m": result.grid.cell_m,
                "n_cols": result.grid.n_cols,
                "n_rows": result.grid.n_rows,
                "crs": result.grid.crs,
            },
            "timings_s": result.timings_s,
            "warnings": result.warnings,
        }
    )
    return record


COORDINATE_COLUMNS = ("x", "y", "x_m", "y_m")


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def spreadsheet_safe(value):
    """A text cell that a spreadsheet would evaluate, made literal with a leading apostrophe."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS) and not _is_number(value):
        return "'" + value
    return value


def spreadsheet_text(value):
    """The inverse of :func:`spreadsheet_safe`, for reading our own CSV tables back."""
    if (
        isinstance(value, str)
        and value.startswith("'")
        and value[1:].startswith(FORMULA_STARTS)
        and not _is_number(value[1:])
    ):
        return value[1:]
    return value


def write_csv(frame: pd.DataFrame, path: Path) -> None:
    """CSV with 6 significant figures, except coordinates, which keep centimetres; text cells
    are made spreadsheet-safe (:func:`spreadsheet_safe`)."""
    out = frame.copy()
    for col in out.columns:
        if pd.api.types.is_object_dtype(out[col]) or pd.api.types.is_string_dtype(out[col]):
            out[col] = out[col].map(spreadsheet_safe)
    for col in COORDINATE_COLUMNS:
        if col in out.columns:
            out[col] = out[col].map(lambda v: f"{v:.2f}")
    out.to_csv(path, index=False, float_format="%.6g")


def _habitat_values(sites) -> pd.DataFrame:
    cols = [
        "habitat",
        "habitat_name",
        "land_cover",
        "deposition_velocity_m_s",
        "deposition_velocity_source",
        "critical_load_min_kg_n_ha_yr",
        "critical_load_max_kg_n_ha_yr",
        "critical_load_used_kg_n_ha_yr",
        "critical_load_source",
        "critical_level_ug_m3",
        "critical_level_source",
    ]
    return pd.DataFrame(sites[cols]).drop_duplicates().reset_index(drop=True)


def _contour_levels(sites) -> list[tuple[float, str]]:
    """Deposition contours at each assessed site's threshold share of its critical load."""
    assessed = sites["assessed"].to_numpy(dtype=bool)
    threshold = sites["threshold_percent"].to_numpy(dtype=float)[assessed]
    load = sites["critical_load_used_kg_n_ha_yr"].to_numpy(dtype=float)[assessed]
    levels = {}
    if threshold.size:
        # each distinct (threshold, load) pair once, in layer order: thousands of sites share few
        _, first = np.unique(np.column_stack([threshold, load]), axis=0, return_index=True)
        for i in sorted(first):
            value = float(threshold[i]) / 100.0 * float(load[i])
            levels.setdefault(round(value, 6), f"{threshold[i]:g} % of {load[i]:g} kg N/ha/yr")
    return sorted(levels.items())


def _write_rasters(result, folder: Path) -> None:
    """concentration.tif, deposition.tif and deposition_in_combination.tif."""
    grid, fields = result.grid, result.fields
    for name, key, description, units in (
        ("concentration.tif", "pc_conc_ug_m3",
         "annual mean NH3 concentration, process contribution (screening estimate)", "ug/m3"),
        ("deposition.tif", "pc_dep_kg_n_ha_yr",
         "dry deposition of N from NH3, process contribution (screening estimate)",
         "kg N/ha/yr"),
        ("deposition_in_combination.tif", "incomb_dep_kg_n_ha_yr",
         "dry deposition of N from NH3, process contribution + other sources", "kg N/ha/yr"),
    ):  # fmt: skip
        write_geotiff(folder / name, grid, fields[key], description, units)


def _write_tables(result, folder: Path) -> pd.DataFrame:
    """sites.csv and sites.gpkg (the undepleted figures beside the depleted ones),
    receptors.csv, sources.csv and sensitivity.csv; returns the sites table as written."""
    import geopandas as gpd

    sites = result.sites
    columns = list(SITE_COLUMNS)
    at = columns.index("pc_pct_load") + 1  # beside the depleted figures
    columns[at:at] = [c for c in UNDEPLETED_COLUMNS if c in sites.columns]
    table = pd.DataFrame(sites[columns])
    write_csv(table, folder / "sites.csv")
    gpd.GeoDataFrame(table, geometry=sites.geometry, crs=sites.crs).to_file(
        folder / "sites.gpkg", layer="sites", driver="GPKG"
    )
    write_csv(result.receptors, folder / "receptors.csv")
    write_csv(result.sources, folder / "sources.csv")
    if result.sensitivity is not None:
        write_csv(result.sensitivity, folder / "sensitivity.csv")
    return table


def _report_figures(result, sources_gdf, contours) -> tuple[dict, dict]:
    """(the report's result figures, its weather figures), each title -> PNG bytes."""
    from siting.dispersion.hourly import HourlyWeather
    from siting.dispersion.sector import WeatherClasses
    from siting.presentation.figures import (
        deposition_figure,
        pc_vs_distance_figure,
        stability_by_speed_png,
        wind_rose_from_table_png,
        wind_rose_png,
    )

    grid, sites = result.grid, result.sites
    figures = {
        "Deposition (process contribution) with habitat sites and sources": deposition_figure(
            result.fields["pc_dep_kg_n_ha_yr"],
            west_m=grid.west_m,
            north_m=grid.north_m,
            cell_m=grid.cell_m,
            sites=sites,
            sources=sources_gdf,
            contours=contours,
            crs_label=result.scenario.crs,
        ),
        "Process contribution at each site against distance from the installation": (
            pc_vs_distance_figure(pd.DataFrame(sites.drop(columns="geometry")))
        ),
    }
    weather_figures = {}  # shown in the report's weather part, after the summary table
    if isinstance(result.weather, HourlyWeather):
        weather_figures["Wind rose of the hourly record (direction the wind blows from)"] = (
            wind_rose_png(result.weather)
        )
        weather_figures["Stability class by wind speed (Turner's method or as given)"] = (
            stability_by_speed_png(result.weather)
        )
    elif isinstance(result.weather, WeatherClasses):
        weather_figures["Wind rose of the frequency table (direction the wind blows from)"] = (
            wind_rose_from_table_png(result.weather)
        )
    return figures, weather_figures


def _write_all(result, folder: Path, run_time: str) -> None:
    """Every output of a screening run into ``folder`` (the staging folder): rasters, tables,
    the packed inputs, map.html, report.html and, last, run.json with every output hashed."""
    import geopandas as gpd

    from siting._version import __version__
    from siting.presentation.report import write_report
    from siting.presentation.webmap import write_screen_map

    grid, sites = result.grid, result.sites
    _write_rasters(result, folder)
    table = _write_tables(result, folder)
    record = run_record(result, run_time)
    record["package"] = package_inputs(result, folder)
    sources_gdf = gpd.GeoDataFrame(
        result.sources.copy(), geometry=result.source_geometries, crs=result.scenario.crs
    )
    contours = _contour_levels(sites)
    write_screen_map(
        folder / "map.html",
        title=result.scenario.title,
        crs=result.scenario.crs,
        west_m=grid.west_m,
        north_m=grid.north_m,
        cell_m=grid.cell_m,
        deposition_kg_n_ha_yr=result.fields["pc_dep_kg_n_ha_yr"],
        sites=sites,
        sources=sources_gdf,
        contours=contours,
        cautions=result.cautions,
        version=__version__,
        run_time=run_time,
    )
    figures, weather_figures = _report_figures(result, sources_gdf, contours)
    write_report(
        folder / "report.html",
        title=result.scenario.title,
        version=__version__,
        run_time=run_time,
        scenario_file=str(result.scenario.path),
        sites=table,
        sources=result.sources,
        weather_summary=result.weather_summary,
        habitat_values=_habitat_values(sites),
        warnings=result.warnings,
        cautions=result.cautions,
        method_notes=METHOD_NOTES,
        run_record=record,
        figures=figures,
        weather_figures=weather_figures,
        cautious_choices=cautious_choices(result),
        sensitivity_summary=result.sensitivity_summary,
    )
    # last: every output the run wrote, hashed, so `siting verify` can tell an edited,
    # truncated or deleted one (run.json itself, the marker and the packed inputs aside)
    record["outputs"] = output_hashes(folder)
    (folder / "run.json").write_text(json.dumps(record, indent=2, default=str), encoding="utf-8")


def output_hashes(folder: Path) -> dict[str, dict]:
    """{relative path: {"sha256", "bytes"}} of every output file in ``folder`` except run.json,
    the marker and the packed inputs/."""
    hashes = {}
    for path in sorted(Path(folder).rglob("*")):
        relative = path.relative_to(folder).as_posix()
        if (
            not path.is_file()
            or relative in ("run.json", OUTPUT_MARKER)
            or relative.startswith("inputs/")
        ):
            continue
        hashes[relative] = {"sha256": sha256_of(path), "bytes": path.stat().st_size}
    return hashes


#: Marks a modelling choice left at the default that errs towards the higher PC.
_CAUTIOUS_DEFAULT = " (cautious default)"


def _wind_choice(scenario) -> tuple[str, str, str]:
    """The rule for the wind at a release height below the anemometer."""
    wind = scenario.weather.wind_below_anemometer
    return (
        "Wind at a release height below the anemometer",
        (
            "power law taken down to the release height (lowest "
            f"{scenario.weather.wind_profile_min_height_m:g} m){_CAUTIOUS_DEFAULT}"
        )
        if wind == "power_law"
        else "measured speed used unchanged",
        'wind_below_anemometer = "unchanged": the measured speed (lower figures)'
        if wind == "power_law"
        else 'wind_below_anemometer = "power_law" (higher figures)',
    )


def _depletion_choice(scenario) -> tuple[str, str, str]:
    """Whether the plume is depleted by deposition on the way."""
    depleted = scenario.deposition.plume_depletion
    return (
        "Plume depletion by deposition on the way",
        "on: figures without depletion are shown beside" if depleted else f"off{_CAUTIOUS_DEFAULT}",
        "off (higher figures)" if depleted else "plume_depletion = true (lower figures)",
    )


def _plume_rise_choices(sources: pd.DataFrame) -> list[tuple[str, str, str]]:
    """One entry per source whose plume rise was decided ("yes" or "no")."""
    return [
        (
            f'Plume rise, source "{row.source_id}"',
            str(row.plume_rise_basis),
            "rise only for an outlet at or above the good-engineering-practice "
            "height of its building (building_height_m, building_width_m)",
        )
        for row in sources.itertuples()
        if getattr(row, "plume_rise", "") in ("yes", "no")
    ]


def _critical_level_choice(sites: pd.DataFrame) -> tuple[str, str, str]:
    """How many sites were given the 1 µg/m³ critical level of ammonia."""
    levels = sites["critical_level_ug_m3"]
    n1 = int((levels == 1.0).sum())
    return (
        "Critical level of ammonia",
        f"1 µg/m³ at {n1} of {len(levels)} site(s) (lichens and bryophytes not shown absent)"
        + (_CAUTIOUS_DEFAULT if n1 == len(levels) else "; 3 µg/m³ where stated absent"),
        "3 µg/m³ where the habitat layer (lichens_bryophytes_field) or the scenario "
        "(lichens_bryophytes_absent) states lichens and bryophytes absent",
    )


def _critical_load_choice(scenario) -> tuple[str, str, str]:
    """Which review of the critical loads, and which end of each range."""
    review = scenario.assessment.critical_load_review
    end = scenario.assessment.critical_load_end
    return (
        "Critical loads",
        f"{review} review, {end} end of each range"
        + (_CAUTIOUS_DEFAULT if (review, end) == ("2022", "lower") else ""),
        'critical_load_review = "2011"; critical_load_end = "middle" or "upper"',
    )


def _abatement_choices(sources: pd.DataFrame) -> list[tuple[str, str, str]]:
    """One entry per source with a claimed abatement: the reduction and its basis."""
    return [
        (
            f'Abatement, source "{row.source_id}"',
            f"{row.reduction_percent:g} %: {row.reduction_basis}",
            "the lower end of the published range unless a higher figure is "
            "stated with its basis (reduction_percent, reduction_basis)",
        )
        for row in sources.itertuples()
        if row.abatement
    ]


def _scrubbing_choices(weather_summary: dict) -> list[tuple[str, str, str]]:
    """One entry per partly scrubbed source: the treated share of its ammonia and hours."""
    shares = weather_summary.get("scrubber_treated_share") or {}
    return [
        (
            f'Partial scrubbing, source "{sid}"',
            f"treated share {100 * share['treated_share']:.1f} % of the year's "
            f"ammonia (hours weighted by {share['hours_weighted_by']}); "
            f"{100 * share['treated_share_of_hours']:.1f} % of its hours",
            "[seasonal] temperature_dependent_emission = false: hours count alike "
            "(a larger treated share, lower figures)",
        )
        for sid, share in shares.items()
    ]


def _direction_choices(weather_summary: dict) -> list[tuple[str, str, str]]:
    """The rule applied to hourly wind directions, when the run recorded one."""
    rule = weather_summary.get("direction_rule")
    if not rule:
        return []
    return [
        (
            "Hourly wind directions",
            str(rule),
            "weather.direction_step_deg = 0: each hour on its exact direction",
        )
    ]


def cautious_choices(result) -> list[tuple[str, str, str]]:
    """(choice, what this run used, the alternative) for each modelling choice that moves the
    PC, in words; "(cautious default)" marks the defaults that err towards the higher PC."""
    scenario = result.scenario
    return [
        _wind_choice(scenario),
        _depletion_choice(scenario),
        *_plume_rise_choices(result.sources),
        _critical_level_choice(result.sites),
        _critical_load_choice(scenario),
        *_abatement_choices(result.sources),
        *_scrubbing_choices(result.weather_summary),
        *_direction_choices(result.weather_summary),
    ]


def estimate_screen_bytes(scenario) -> int:
    """A generous estimate of a screening run's output folder [bytes], known before any work:
    three float32 GeoTIFFs and the map's image of the grid (uncompressed, 4 bytes a cell),
    and four times the inputs (their packaged copy, and the habitat sites again in
    sites.gpkg, the map and the report)."""
    from siting.output.grids import grid_around

    grid = grid_around(
        [s.x for s in scenario.sources],
        [s.y for s in scenario.sources],
        scenario.grid.margin_m,
        scenario.grid.spacing_m,
        scenario.crs,
    )
    inputs = 0
    for path in input_paths(scenario):
        try:
            inputs += Path(path).stat().st_size
        except (OSError, TypeError):
            continue
    return 4 * 4 * grid.size + 4 * inputs


def write_outputs(result, out_dir: Path, overwrite: bool = False) -> Path:
    """Write every output of a screening run atomically into ``out_dir``; returns it."""
    out_dir = Path(out_dir).resolve()
    check_output_dir(
        out_dir,
        overwrite,
        input_paths(result.scenario),
        need_bytes=estimate_screen_bytes(result.scenario),
    )
    run_time = datetime.now(UTC).replace(microsecond=0).isoformat()
    with staged_folder(out_dir, overwrite) as staging:
        _write_all(result, staging, run_time)
    return out_dir


@contextmanager
def staged_folder(out_dir: Path, overwrite: bool, need_bytes: int = 0) -> Iterator[Path]:
    """A staging folder beside ``out_dir`` that takes its place only if the block succeeds.

    Parameters
    ----------
    out_dir : Path
        The folder to produce; its parent is created if needed.
    overwrite : bool
        Whether an existing ``out_dir`` may be replaced.
    need_bytes : int, optional
        The run's estimate of what it will write [bytes], checked against the free space on
        entry (:func:`check_output_dir`).

    Yields
    ------
    staging : Path
        A new, empty folder ``.<name>.<random>.partial`` in the parent of ``out_dir``, mode
        0o755 (the result is an ordinary folder).

    Raises
    ------
    OutputExistsError
        On entry, or when the block ends, if ``out_dir`` exists without ``overwrite`` or is
        not a folder (:func:`check_output_dir`); nothing is then changed.

    Notes
    -----
    When the block ends normally the staging folder is renamed to ``out_dir``. An existing
    ``out_dir`` is first renamed aside to this run's own ``.<name>.<random>.old`` and deleted
    only once the new folder is in place (it is put back if that rename fails). When the block
    raises anything (also KeyboardInterrupt), the staging folder is deleted, ``out_dir`` is left
    as it was and the exception propagates; an interrupt after the new folder is in place is
    raised as InterruptedAfterWriting (the result is whole). Both renames stay within one
    folder, so each is atomic on POSIX. The whole swap runs under the folder's lock.
    """
    out_dir = Path(out_dir).resolve()
    check_output_dir(out_dir, overwrite, need_bytes=need_bytes)
    out_dir.parent.mkdir(parents=True, exist_ok=True)
    with _writing_lock(out_dir):
        yield from _staged(out_dir, overwrite)


class InterruptedAfterWriting(KeyboardInterrupt):
    """An interrupt (Ctrl-C, SIGTERM, SIGHUP) that came once the new output folder was in
    place: the run's result is complete, only tidying was cut short (``out_dir``)."""

    def __init__(self, out_dir: Path) -> None:
        super().__init__(str(out_dir))
        self.out_dir = out_dir


def _staged(out_dir: Path, overwrite: bool) -> Iterator[Path]:
    """The body of staged_folder, run while this run holds the folder's lock.

    The result is committed at the rename of the staging folder to ``out_dir``: an exception
    before it leaves ``out_dir`` as it was (the previous result renamed back if it had been
    moved aside) and removes the staging folder; an interrupt after it removes the backup of
    the previous result and is raised as InterruptedAfterWriting (the new result is whole).
    """
    staging = backup = None
    try:
        while staging is None:  # a name of its own; named before it is made, so an
            # interrupt just after mkdir still finds and removes it
            staging = out_dir.parent / f".{out_dir.name}.{secrets.token_hex(4)}.partial"
            try:
                staging.mkdir(mode=0o755)
            except FileExistsError:
                staging = None
        staging.chmod(0o755)  # whatever the umask: the result is an ordinary folder
        from siting._version import __version__

        (staging / OUTPUT_MARKER).write_text(
            json.dumps(
                {
                    "written_by": "siting",
                    "version": __version__,
                    "pid": os.getpid(),
                    "note": "an output folder of siting: --overwrite may replace it",
                }
            )
            + "\n",
            encoding="utf-8",
        )
        yield staging
        check_output_dir(out_dir, overwrite)  # it may have appeared while the block ran
        if out_dir.exists():
            # a name of this run's own (beside its staging folder), so concurrent runs never
            # share one and an old backup of another run is never deleted
            backup = staging.with_name(staging.name.removesuffix(".partial") + ".old")
            out_dir.rename(backup)
            try:
                staging.rename(out_dir)
            except BaseException:
                if staging.exists() and not out_dir.exists():
                    backup.rename(out_dir)  # the new folder never went in: the old one back
                raise
            shutil.rmtree(backup)
        else:
            try:
                staging.rename(out_dir)
            except OSError:
                if out_dir.exists() and staging.exists():  # made by someone else meanwhile
                    raise OutputExistsError(
                        f"{out_dir}: appeared while this run was writing; "
                        "nothing of this run was kept"
                    ) from None
                raise
    except BaseException as exc:
        committed = staging is not None and not staging.exists() and out_dir.is_dir()
        if not committed:
            if staging is not None:
                shutil.rmtree(staging, ignore_errors=True)
            raise
        if backup is not None and backup.exists():
            try:
                shutil.rmtree(backup, ignore_errors=True)
            except BaseException:  # a second interrupt: the next run removes it
                pass
        if isinstance(exc, KeyboardInterrupt) and not isinstance(exc, InterruptedAfterWriting):
            raise InterruptedAfterWriting(out_dir) from exc
        raise
