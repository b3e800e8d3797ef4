"""Write docs/API.md, the Python API page, from the packages' ``__all__`` tables and docstrings.

    python docs/make_api.py           # rewrite docs/API.md
    python docs/make_api.py --check   # exit 1 if docs/API.md is not what this would write

The page is the guide below (how a notebook uses siting) followed by one section per package:
each exported name with its call signature and the first paragraph of its docstring, grouped
by the module that defines it. tests/test_docs.py checks that the page is current, so a name
or a summary changed in the code changes the page in the same commit.
"""

from __future__ import annotations

import importlib
import inspect
import re
import sys
from pathlib import Path

PAGE = Path(__file__).resolve().parent / "API.md"

#: The packages documented, in the page's order (the top level first, then the layers from the
#: top down, as DEVELOPERS.md draws them).
PACKAGES = (
    "siting",
    "siting.runs",
    "siting.output",
    "siting.presentation",
    "siting.readers",
    "siting.dispersion",
    "siting.physics",
)

GUIDE = """\
# The Python API of siting

Everything the command line does is a Python call, and the command line is built on these
calls: each command is one run (`screen`, `place`, `verify`, `region`, or the weather
readers) and one writer that puts its result on disk. A notebook can stop after the run
and work on the result in memory (pandas and geopandas tables, numpy grids), or write the
same files the command writes. Results are screening estimates from a simplified model; the
cautions travel with every result (`result.cautions`) and every output.

This page is written by `python docs/make_api.py` from the code; do not edit it by hand.

## Screening a scenario

```python
import siting

scenario = siting.load_scenario(siting.demo_dir() / "scenario.toml")  # or your own file
result = siting.screen(scenario)  # siting screen, without writing
result.sites[["name", "tier", "pc_pct_level", "pc_pct_load", "verdict"]]
result.sources  # each source's emission derivation
result.fields["pc_dep_kg_n_ha_yr"]  # a grid, numpy (n_rows, n_cols)
result.sensitivity_summary  # does a variant flip a verdict?
siting.write_outputs(result, "maps/my_run")  # the files of `siting screen`
```

`load_scenario` checks every key of the scenario file (README.md, "The scenario file") and
resolves its paths; `screen` also takes the file's path directly. `write_outputs` writes
the tables, GeoTIFFs, report, map, run record and the packed inputs into a staging folder and
moves it into place when complete; an existing folder is replaced only with
`overwrite=True`, and only if siting wrote it.

## Where could a house go, and checking a submission

```python
placed = siting.place(scenario, "H2", spacing_m=25.0)  # siting place --house H2
placed.positions.head()  # ranked, best first
siting.write_place_outputs(placed, "maps/place_h2")

check = siting.verify("maps/my_run")  # siting verify: a folder of screen
check.consistent, check.exit_code
[(f.severity, f.code, f.message) for f in check.findings]
siting.write_verify_outputs(check, "maps/check")  # verify.html, findings.json
```

## Many farms over a region

```python
demo = siting.demo_dir()
options = siting.RegionOptions(spacing_m=100.0, memory_mb=2000.0)
fields = siting.FarmFields(id_field="id", height_field="height_m")
regional = siting.region(
    demo / "region_farms.gpkg",
    demo / "weather_table.csv",
    demo / "region_habitats.gpkg",
    options,
    fields,
)
regional.sites, regional.contributors  # per site, and its top farms
regional.concentration_ug_m3  # the grid, numpy
siting.write_region_outputs(regional, "maps/region")
```

`RegionOptions` holds the settings of `siting region` (its options, by the names of their
Python parameters) and `FarmFields` the farms layer's attribute names.

## Weather

```python
weather, summary = siting.read_hourly_record(
    [demo / "hourly_weather.csv"], latitude_deg=52.4, longitude_deg=9.0
)
summary["hours_used"], summary["calm_percent"], summary["prevailing_from_words"]
table = siting.frequency_table_from_hourly(weather, n_sectors=12)  # a pandas DataFrame
classes, table_summary = siting.read_frequency_table(demo / "weather_table.csv")
```

`read_hourly_record` checks a station record (missing hours are never filled; calms keep a
direction and are raised to the minimum speed) and `frequency_table_from_hourly` bins it
into the joint frequency table a scenario's `frequency_table` takes.
`write_weather_outputs` writes the files of `siting weather`.

## Warnings and errors

Bad input raises a `siting.SitingError`: `InputError` (also a `ValueError`) for a wrong,
missing or out-of-range value, `InputFileError` (also a `FileNotFoundError`) for a missing
file, `OutputExistsError` (also a `FileExistsError`) for an output folder that may not be
written. The message names the file, key or parameter; nothing is written.

Legal but doubtful input gives a `siting.SitingWarning` (`InputWarning`, `WeatherWarning`,
`AccuracyWarning`): the run goes on, keeps the messages on its result (`result.warnings`,
listed in its outputs) and issues them as Python warnings, so a notebook shows them and
`warnings.simplefilter("error", siting.SitingWarning)` turns them into exceptions. Around a
call that has no result object (the weather readers), `siting.collect_warnings()` collects
them:

```python
with siting.collect_warnings() as found:
    weather, summary = siting.read_hourly_record([demo / "hourly_weather.csv"], 52.4, 9.0)
found.messages  # the warnings' texts, each once
```

## The packages

`siting` exports the entry points above. Every public function and class of a subpackage is
exported by that subpackage (`siting.runs`, `siting.readers`, ...; `siting.presentation`
exports its formats, figures and pages), imported on first use. The subpackages are layers:
each uses only the ones below it (DEVELOPERS.md).
"""


def _default_text(value) -> str:
    """A default value as the signature shows it: short reprs as they are, long ones as ..."""
    text = repr(value)  # a dataclass field's default_factory shows as <factory>
    return text if len(text) <= 24 and " at 0x" not in text and text != "<factory>" else "..."


def signature_text(obj) -> str:
    """The call signature without annotations, e.g. ``(path, moved=None)``; "" if none."""
    try:
        signature = inspect.signature(obj)
    except (TypeError, ValueError):
        return ""
    parts, keyword_only = [], False
    for param in signature.parameters.values():
        if param.name in ("self", "cls"):
            continue
        if param.kind is param.KEYWORD_ONLY and not keyword_only:
            parts.append("*")
            keyword_only = True
        if param.kind is param.VAR_POSITIONAL:
            parts.append(f"*{param.name}")
            keyword_only = True
        elif param.kind is param.VAR_KEYWORD:
            parts.append(f"**{param.name}")
        elif param.default is param.empty:
            parts.append(param.name)
        else:
            parts.append(f"{param.name}={_default_text(param.default)}")
    return f"({', '.join(parts)})"


def summary_text(obj) -> str:
    """The first paragraph of a docstring, on one line, its reST markup as Markdown."""
    doc = inspect.getdoc(obj) or ""
    text = " ".join(doc.strip().split("\n\n")[0].split())
    text = re.sub(r":\w+:`~?([^`]+)`", r"`\1`", text)  # :func:`name` -> `name`
    return text.replace("``", "`")


def _kind(obj) -> str:
    if inspect.isclass(obj):
        if issubclass(obj, Warning):
            return "warning"
        return "exception" if issubclass(obj, BaseException) else "class"
    return "function" if callable(obj) else "value"


def _position(obj) -> int:
    """Line of a definition in its module, to list names in the order the module has them."""
    try:
        return inspect.getsourcelines(obj)[1]
    except (OSError, TypeError):
        return 0


def package_section(package: str) -> str:
    """The section of one package: its docstring's first paragraph, then its names by module."""
    module = importlib.import_module(package)
    lines = [f"### `{package}`", "", summary_text(module), ""]
    by_module: dict[str, list[tuple[int, str, object]]] = {}
    for name in module.__all__:
        obj = getattr(module, name)
        home = getattr(obj, "__module__", None) if not isinstance(obj, str) else package
        by_module.setdefault(home or package, []).append((_position(obj), name, obj))
    for home in sorted(by_module):
        lines.append(f"From `{home}`:")
        lines.append("")
        for _, name, obj in sorted(by_module[home], key=lambda row: (row[0], row[1])):
            if _kind(obj) == "value":  # __version__: its value would date the page
                lines.append(f"- `{name}` ({type(obj).__name__})")
                continue
            call = signature_text(obj) if _kind(obj) in ("class", "function") else ""
            lines.append(f"- `{name}{call}` ({_kind(obj)}): {summary_text(obj)}")
        lines.append("")
    return "\n".join(lines)


def render() -> str:
    """The whole page."""
    return GUIDE + "\n" + "\n".join(package_section(p) for p in PACKAGES).rstrip("\n") + "\n"


def main(argv: list[str]) -> int:
    text = render()
    if "--check" in argv:
        current = PAGE.read_text(encoding="utf-8") if PAGE.is_file() else ""
        if current != text:
            print(f"{PAGE} is not current: run python docs/make_api.py", file=sys.stderr)
            return 1
        return 0
    PAGE.write_text(text, encoding="utf-8")
    print(f"wrote {PAGE}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
