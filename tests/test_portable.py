"""Outputs name no folder of the machine (siting.output.portable): a screening and a placement
of a scenario in tmp_path, every output file read back for the scenario's folder, the home
folder and siting's own package folder; and the names run.json gives instead.
"""

from __future__ import annotations

import html
import json
import os
import re
import shutil
from pathlib import Path

import pytest
from pypdf import PdfReader

import siting
from siting.cli import main
from siting.output.portable import relative_name
from siting.readers.resources import config_dir, demo_dir

#: data: URLs (base64 figures) are left out of a page before it is searched: their letters
#: could spell a short folder name by chance.
_DATA_URL = re.compile(r"data:[a-z]+/[a-z+.-]+;base64,[A-Za-z0-9+/=]+")


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """The demo copied into a folder of its own, screened (with report.pdf) and placed, each
    from another working folder; returns (the scenario's folder, [output folders])."""
    root = tmp_path_factory.mktemp("portable")
    folder = root / "client" / "scenario"
    shutil.copytree(demo_dir(), folder)
    scenario = folder / "scenario.toml"
    text = scenario.read_text(encoding="utf-8")
    scenario.write_text(text.replace("spacing_m = 25.0", "spacing_m = 100.0", 1), "utf-8")
    elsewhere = root / "elsewhere"
    elsewhere.mkdir()
    cwd = Path.cwd()
    os.chdir(elsewhere)
    try:
        screened, placed = root / "out_screen", root / "out_place"
        assert main(["screen", str(scenario), "--out", str(screened), "--quiet"]) == 0
        argv = ["place", str(scenario), "--house", "H2", "--out", str(placed), "--quiet"]
        assert main([*argv, "--spacing", "50"]) == 0
    finally:
        os.chdir(cwd)
    return folder, [screened, placed]


def _forbidden(folder: Path) -> list[str]:
    """The folder names no output may hold: the scenario's folder (resolved and as given),
    the home folder and siting's package folder."""
    names = {str(folder), str(folder.resolve()), str(Path(siting.__file__).resolve().parent)}
    names.add(str(Path(siting.__file__).parent))
    home = str(Path.home())
    if len(home) > 1:  # a home of "/" would match every path
        names.add(home)
    return sorted(names)


def _texts(path: Path) -> list[str]:
    """What a file says: the text of a text file (HTML without its data: URLs, also
    unescaped), the text of each page of a PDF, and for any file its bytes read as Latin-1
    (so a binary file's strings are searched too)."""
    data = path.read_bytes()
    texts = [data.decode("latin-1")]
    if path.suffix == ".pdf":
        texts += [page.extract_text() for page in PdfReader(path).pages]
        return texts
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        return texts
    text = _DATA_URL.sub("", text)
    texts = [_DATA_URL.sub("", texts[0]), text, html.unescape(text)]
    if path.suffix == ".json":
        texts.append(json.dumps(json.loads(text), ensure_ascii=False))
    return texts


def test_no_output_names_a_folder_of_the_machine(runs):
    """Every file of both output folders (tables, pages, PDF, run.json, GeoTIFF, GeoPackage;
    the packed inputs, copies of the user's own files, aside) holds none of the forbidden
    folder names."""
    folder, outputs = runs
    forbidden = _forbidden(folder)
    checked = []
    for out in outputs:
        for path in sorted(p for p in out.rglob("*") if p.is_file()):
            if "inputs" in path.relative_to(out).parts:
                continue
            for text in _texts(path):
                found = [name for name in forbidden if name in text]
                assert found == [], f"{path.relative_to(out.parent)} names {found}"
            checked.append(path.relative_to(out).as_posix())
    for name in ("report.html", "report.pdf", "run.json", "sites.csv", "map.html"):
        assert name in checked
    assert {"positions.csv", "report.html", "run.json"} <= {
        p.relative_to(outputs[1]).as_posix() for p in outputs[1].rglob("*")
    }


def test_run_json_names_the_files_relative_to_the_scenario(runs):
    """Inputs by their path in the scenario's folder, the bundled tables and rule set as
    siting/config/... marked bundled; each hash still that of the file named."""
    folder, (screened, placed) = runs
    for out in (screened, placed):
        record = json.loads((out / "run.json").read_text(encoding="utf-8"))
        for key, entry in record["inputs"].items():
            assert not os.path.isabs(entry["path"]), key
            assert (folder / entry["path"]).is_file(), key
        assert record["inputs"]["scenario"]["path"] == "scenario.toml"
        for name, entry in record["config_tables"].items():
            assert entry["path"] == f"siting/config/{name}" and entry["bundled"] is True
            assert (config_dir() / name).is_file()
        assert record["rules"]["path"] == f"siting/config/rules/{record['rules']['id']}.toml"
        assert record["parameters"]["habitats"]["file"] == "habitats.gpkg"
        assert record["project"]["reference"]  # the demo's [project], recorded


def test_the_report_shows_bundled_tables_with_the_version(runs):
    """The report names a bundled table siting/config/<file> "bundled with siting <version>"."""
    _, (screened, _) = runs
    page = (screened / "report.html").read_text(encoding="utf-8")
    assert f"siting/config (bundled with siting {siting.__version__})" in page
    assert "scenario scenario.toml" in page


def test_a_file_outside_the_scenario_folder_is_named_by_its_packed_copy(tmp_path):
    """A file named by an absolute path outside both the scenario's and siting's folders is
    named where the output's package holds it; the folder still verifies once moved and the
    original file gone (verify maps the packed scenario's own names to the packed copies)."""
    from siting.runs.verification import verify

    folder = tmp_path / "scenario"
    shutil.copytree(demo_dir(), folder)
    shared = tmp_path / "shared"
    shared.mkdir()
    shutil.move(folder / "weather_table.csv", shared / "weather_table.csv")
    scenario = folder / "scenario.toml"
    text = scenario.read_text(encoding="utf-8")
    absolute = (shared / "weather_table.csv").as_posix()
    text = text.replace('frequency_table = "weather_table.csv"', f'frequency_table = "{absolute}"')
    scenario.write_text(text.replace("spacing_m = 25.0", "spacing_m = 100.0", 1), "utf-8")
    out = tmp_path / "out"
    assert main(["screen", str(scenario), "--out", str(out), "--quiet", "--no-pdf"]) == 0
    record = json.loads((out / "run.json").read_text(encoding="utf-8"))
    packed = "inputs/_external/weather/weather_table.csv"
    assert record["inputs"]["weather"]["path"] == packed and (out / packed).is_file()
    moved = tmp_path / "received" / "out"
    shutil.copytree(out, moved)  # as if sent to a regulator
    shutil.rmtree(shared)
    shutil.rmtree(out)
    result = verify(moved)
    assert result.consistent, [f.code for f in result.findings if f.severity == "high"]


def test_relative_names_prefer_the_deeper_folder(tmp_path):
    """A file in both the scenario's folder and siting's package folder (the bundled demo) is
    named from the deeper one; a table of siting's from its package folder, marked bundled."""
    assert relative_name(demo_dir() / "habitats.gpkg", demo_dir()) == ("habitats.gpkg", False)
    assert relative_name(config_dir() / "abatement.toml", demo_dir()) == (
        "siting/config/abatement.toml",
        True,
    )
    assert relative_name(config_dir() / "abatement.toml", tmp_path) == (
        "siting/config/abatement.toml",
        True,
    )
    assert relative_name(tmp_path / "a" / "b.csv", tmp_path) == ("a/b.csv", False)
    assert relative_name(tmp_path / "b.csv", tmp_path / "a") is None
