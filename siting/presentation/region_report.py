"""The regional run's report (report.html of ``siting region``) as text.

One self-contained page laid out by ``templates/region_report.html`` on the screening report's
shell, stylesheet and macros (``page.html``, ``shared.css``, ``parts.html``): the summary
(farms, sites, how many pass, do not pass or are not judged under the rule set, the farms that
contribute most), the sites table (all-farms figures and verdict, most affected first), each
site's top contributors with their share, the method (farms in release classes, the tiled FFT
grid, the sector-averaged plume, the site points, the rule set), the cautions, the warnings the
run raised and a short run record. Every value comes from the run and its run record
(:func:`siting.output.region.region_record`); numbers are formatted here
(:mod:`siting.presentation.formats`), text is escaped by the template.

No path of the machine enters the page: input files are shown relative to the output folder
(:func:`shown_path`), files of the installed package as ``siting/...``, and a file that
shares nothing with the output folder but the root of the file system by its name alone.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from siting.presentation.formats import (
    format_for_column,
    format_number,
    format_percent,
    shown_path,
)
from siting.presentation.html_parts import Verdict, render, text, verdict

__all__ = ["render_region_report", "shown_warnings"]

#: Largest contributors listed in the summary.
_TOP_FARMS = 5


def shown_warnings(
    record: Mapping[str, Any], warnings: Sequence[Any], out_dir: str | Path
) -> list[str]:
    """The warnings as the report and run.json show them: each input's absolute folder, and the
    output folder, replaced by the way :func:`shown_path` names them.

    Parameters
    ----------
    record : mapping
        The run record, its input paths still absolute.
    warnings : sequence
        The run's warnings (messages or their text).
    out_dir : str or Path
        The output folder.

    Returns
    -------
    list of str
        Each warning's text, no folder of the machine in it.
    """
    folders = sorted(
        {
            (str(Path(entry["path"]).parent), str(Path(shown_path(entry["path"], out_dir)).parent))
            for entry in record["inputs"].values()
        }
        | {(str(Path(out_dir).resolve()), ".")},
        key=lambda pair: -len(pair[0]),
    )
    return [_scrubbed(str(w), folders) for w in warnings]


def _scrubbed(message: str, folders: Sequence[tuple[str, str]]) -> str:
    """A message with each absolute folder replaced by the way the report shows it."""
    for folder, shown in folders:
        message = message.replace(folder, shown)
    return message


def _worst_first(sites: pd.DataFrame) -> pd.DataFrame:
    """The sites, the largest share of level or load first (no figure last, layer order kept)."""
    with np.errstate(invalid="ignore"):
        worst = np.fmax(
            pd.to_numeric(sites["incomb_pct_level"], errors="coerce").to_numpy(float),
            pd.to_numeric(sites["incomb_pct_load"], errors="coerce").to_numpy(float),
        )
    order = np.argsort(-np.where(np.isnan(worst), -np.inf, worst), kind="stable")
    return sites.iloc[order]


_NUMBERS = ("incomb_conc_max_ug_m3", "incomb_pct_level", "incomb_dep_max_kg_n_ha_yr",
            "incomb_pct_load")  # fmt: skip


def _unjudged(rules_id: str) -> str:
    """The verdict of a site whose tier has no in-combination rule in the set (region_sites)."""
    return f"no in-combination rule in {rules_id}"


def _site_rows(sites: pd.DataFrame, rules_id: str) -> list[tuple]:
    """Sites table rows: id, name, designation, tier, the four figures, verdict, deciding rule;
    a site its set does not judge has a grey badge, not a failing one."""
    rows = []
    for row in _worst_first(sites).to_dict("records"):
        shown = verdict(row.get("verdict"), row.get("passes"))
        if shown.text == _unjudged(rules_id):
            shown = Verdict(shown.text, "verdict-none", "not judged: no rule for its tier")
        rows.append(
            (
                text(row["site_id"]),
                text(row["name"]),
                text(row.get("designation")),
                text(row.get("tier")),
                tuple(format_for_column(row[c], c) for c in _NUMBERS),
                shown,
                text(row.get("deciding_rule")),
            )
        )
    return rows


def _verdict_counts(sites: pd.DataFrame, rules_id: str) -> dict[str, int]:
    """How many sites do not pass, pass, and are not judged (no in-combination rule)."""
    unjudged = sites["verdict"].astype(str) == _unjudged(rules_id)
    passes = sites["passes"].astype(bool) & ~unjudged
    return {
        "not_passing": int((~passes & ~unjudged).sum()),
        "passing": int(passes.sum()),
        "not_judged": int(unjudged.sum()),
    }


def _largest_contributors(contributors: pd.DataFrame, farms: pd.DataFrame) -> list[tuple]:
    """The farms that lead most sites: farm, sites led, sites in its top list, largest share,
    emission; the first :data:`_TOP_FARMS`."""
    if contributors.empty:
        return []
    by_farm = contributors.groupby("farm_id", sort=False).agg(
        led=("rank", lambda r: int((r == 1).sum())),
        listed=("site_id", "nunique"),
        share=("share_of_site_total_percent", "max"),
    )
    by_farm = by_farm.sort_values(["led", "share"], ascending=False, kind="stable")
    emission = farms.set_index("farm_id")["nh3_kg_yr"]
    return [
        (
            text(farm),
            int(row.led),
            int(row.listed),
            format_percent(float(row.share)),
            _kg_yr(emission.get(farm)),
        )
        for farm, row in by_farm.head(_TOP_FARMS).iterrows()
    ]


def _contributor_groups(sites: pd.DataFrame, contributors: pd.DataFrame) -> list[tuple]:
    """Per site (most affected first): id, name, and its contributors' rows (rank, farm,
    deposition, share, distance)."""
    groups = dict(list(contributors.groupby("site_id", sort=False)))
    out = []
    for row in _worst_first(sites).to_dict("records"):
        frame = groups.get(row["site_id"])
        if frame is None:
            continue
        farms = [
            (
                int(c["rank"]),
                text(c["farm_id"]),
                format_for_column(c["dep_kg_n_ha_yr"], "dep_kg_n_ha_yr"),
                format_percent(float(c["share_of_site_total_percent"])),
                f"{float(c['distance_m']):.0f}",
            )
            for c in frame.sort_values("rank").to_dict("records")
        ]
        out.append((text(row["site_id"]), text(row["name"]), farms))
    return out


#: How the wind speed below the anemometer is taken, in words (RegionOptions values).
_WIND_BELOW = {
    "power_law": "scaled down to the release height by the power-law profile",
    "unchanged": "taken as measured below the anemometer",
}


def _method(record: Mapping[str, Any], farms_file: str) -> list[str]:
    """What the regional run computes, in words, from its run record."""
    grid, plan, opt = record["grid"], record["plan"], record["options"]
    weather, rules = record["weather_summary"], record["rules"]
    classes = record["release_classes"]
    n_farms = sum(int(c["farms"]) for c in classes)
    depletion = "with" if opt.get("plume_depletion") else "without"
    wind = _WIND_BELOW.get(str(opt.get("wind_below_anemometer")), opt.get("wind_below_anemometer"))
    land_cover = str(grid["land_cover"]).replace("_", " ")
    return [
        f"Farms: {n_farms} farms of {farms_file}, {_kg_yr(record['emission_total_nh3_kg_yr'])} "
        "kg NH3/yr in all, each one point or one square volume source, grouped in "
        f"{len(classes)} release class(es) (kind, release height rounded to 0.5 m, footprint "
        "side on a √2 ladder).",
        "Plume: long-term means from a sector-averaged Gaussian plume over the frequency table "
        f"({weather.get('sectors')} sectors of {format_number(weather.get('sector_width_deg'))}°, "
        f"{weather.get('rows')} rows), {opt.get('land_type')} dispersion coefficients, the wind "
        f"measured at {format_number(opt.get('anemometer_height_m'))} m and {wind}, {depletion} "
        "plume depletion; flat terrain, no building wake.",
        f"Tiles: the grid of {grid['n_cols']} × {grid['n_rows']} cells of "
        f"{format_number(grid['cell_m'])} m ({grid['crs']}) is split into {plan['n_tiles']} "
        f"tile(s) of up to {plan['tile_rows']} × {plan['tile_cols']} cells, each one dask task; "
        "the tasks and their order of summation are the same whichever scheduler runs them, so "
        "are the results.",
        str(record.get("accuracy", "")),
        f"Deposition: grid cells with the {land_cover} velocity "
        f"{format_number(grid['deposition_velocity_m_s'])} m/s; each site with its own land "
        f"cover's. Critical loads: the {opt.get('critical_load_review')} review, "
        f"{opt.get('critical_load_end')} end of each range.",
        "Sites: each site's figures are direct sums over every farm at the site's own points "
        "(its boundary and an interior lattice); its contributors (the top "
        f"{opt.get('top')}) are each farm's own part at the site's point of maximum deposition.",
        f"Verdicts: rule set {rules['id']} ({rules['title']}): {rules['judged']}; a tier whose "
        "set has no in-combination rule is not judged.",
    ]


def _kg_yr(value: Any) -> str:
    """An emission [kg yr-1] as the tables show it (whole kilograms from 1000)."""
    return format_for_column(value, "nh3_kg_yr")


def _run_record(record: Mapping[str, Any], out_dir: str | Path) -> dict[str, Any]:
    """The short run record: overview rows, input files (shown paths) with SHA-256, versions."""
    rules = record["rules"]
    files = [
        (text(key), shown_path(entry["path"], out_dir), text(entry["sha256"]))
        for key, entry in record["inputs"].items()
    ]
    files.append(("rule set", shown_path(rules["path"], out_dir), text(rules["sha256"])))
    files += [
        (text(name), shown_path(entry["path"], out_dir), text(entry["sha256"]))
        for name, entry in record.get("config_tables", {}).items()
    ]
    overview = [
        ("Tool", f"siting {record['version']}, command {record['command']}"),
        ("Run time (UTC)", text(record["run_time_utc"])),
        ("Coordinate reference system", text(record["crs"])),
        ("Total time", f"{format_number(record['timings_s'].get('total_s'))} s with "
                       f"{record['timings_s'].get('workers')} worker(s)"),
    ]  # fmt: skip
    versions = [(text(k), text(v)) for k, v in record.get("versions", {}).items()]
    return {"overview": overview, "files": files, "versions": versions}


def render_region_report(
    *,
    title: str,
    sites: pd.DataFrame | None,
    contributors: pd.DataFrame,
    farms: pd.DataFrame,
    record: Mapping[str, Any],
    cautions: Sequence[str],
    warnings: Sequence[str],
    out_dir: str | Path,
) -> str:
    """report.html of a regional run.

    Parameters
    ----------
    title : str
        The page's title (user text, escaped by the template).
    sites : pandas.DataFrame or None
        The sites' all-farms figures and verdicts (the run's ``sites``; None without a habitat
        layer): site_id, name, designation, tier, incomb_conc_max_ug_m3 [ug m-3],
        incomb_dep_max_kg_n_ha_yr [kg N ha-1 yr-1], incomb_pct_level, incomb_pct_load [%],
        verdict, passes, deciding_rule.
    contributors : pandas.DataFrame
        Per site its top farms (site_id, rank, farm_id, dep_kg_n_ha_yr [kg N ha-1 yr-1],
        share_of_site_total_percent [%], distance_m [m]).
    farms : pandas.DataFrame
        The farms (farm_id, nh3_kg_yr [kg NH3 yr-1]).
    record : mapping
        The run record (:func:`siting.output.region.region_record`).
    cautions, warnings : sequence of str
        The run's cautions and the warnings it raised.
    out_dir : str or Path
        The output folder: input files are shown relative to it (:func:`shown_path`).

    Returns
    -------
    str
        The page, UTF-8 text with inline CSS, no scripts, no links outside it.
    """
    rules = record["rules"]
    farms_file = shown_path(record["inputs"]["farms"]["path"], out_dir)
    has_sites = sites is not None and len(sites) > 0
    return render(
        "region_report.html",
        page_title=f"{title} — regional screening report",
        title=title,
        version=text(record["version"]),
        run_time=text(record["run_time_utc"]),
        farms_file=farms_file,
        n_farms=len(farms),
        emission=_kg_yr(record["emission_total_nh3_kg_yr"]),
        n_sites=len(sites) if sites is not None else 0,
        has_sites=has_sites,
        counts=_verdict_counts(sites, rules["id"]) if has_sites else None,
        rules_id=text(rules["id"]),
        rules_title=text(rules["title"]),
        largest=_largest_contributors(contributors, farms),
        site_rows=_site_rows(sites, rules["id"]) if has_sites else [],
        groups=_contributor_groups(sites, contributors) if has_sites else [],
        top=record["options"].get("top"),
        method=_method(record, farms_file),
        cautions=[text(c) for c in cautions],
        warnings=[text(w) for w in shown_warnings(record, warnings, out_dir)],
        run_record=_run_record(record, out_dir),
    )
