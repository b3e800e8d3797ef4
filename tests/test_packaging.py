"""The wheel: builds, carries the bundled tables and demo, installs into a fresh venv and runs.

Slow (a wheel build plus a venv with numpy, geopandas, rasterio... from the package index):
run with ``pytest -m slow tests/test_packaging.py``. The installed ``siting demo`` must find its
siting/config/ and siting/data_demo/ inside the installed package (importlib.resources,
siting/readers/resources.py), not in this checkout, so it runs from an empty folder with a clean environment.
"""

from __future__ import annotations

import hashlib
import importlib.util
import json
import os
import subprocess
import sys
import venv
import zipfile
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
BUNDLED = [
    "siting/config/emission_factors.toml",
    "siting/data_demo/scenario.toml",
    "siting/data_demo/habitats.gpkg",
]

pytestmark = pytest.mark.slow


def _run(cmd: list[str], timeout_s: float, **kwargs) -> subprocess.CompletedProcess:
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout_s, **kwargs)
    assert done.returncode == 0, (
        f"{' '.join(map(str, cmd))} exited {done.returncode}\n"
        f"{done.stdout[-3000:]}\n{done.stderr[-3000:]}"
    )
    return done


def _clean_env() -> dict[str, str]:
    """The environment without anything that would point Python at this checkout."""
    env = {
        k: v
        for k, v in os.environ.items()
        if k not in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV", "PYTHONSTARTUP")
    }
    env["PYTHONNOUSERSITE"] = "1"
    return env


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    """The wheel built from this checkout."""
    if importlib.util.find_spec("build") is None:
        pytest.skip("the 'build' package is not installed (pip install build)")
    outdir = tmp_path_factory.mktemp("dist")
    _run(
        [sys.executable, "-m", "build", "--wheel", "--outdir", str(outdir), str(REPO)],
        timeout_s=600,
        cwd=REPO,
    )
    wheels = list(outdir.glob("siting-*.whl"))
    assert len(wheels) == 1, wheels
    return wheels[0]


@pytest.fixture(scope="module")
def installed(wheel, tmp_path_factory) -> Path:
    """A fresh venv with the wheel (and its dependencies from the index); returns its bin/."""
    if importlib.util.find_spec("ensurepip") is None:
        pytest.skip("venv cannot bootstrap pip here (ensurepip missing)")
    home = tmp_path_factory.mktemp("venv") / "env"
    venv.EnvBuilder(with_pip=True, clear=True).create(home)
    bindir = home / ("Scripts" if os.name == "nt" else "bin")
    python = bindir / ("python.exe" if os.name == "nt" else "python")
    _run(
        [
            str(python),
            "-m",
            "pip",
            "install",
            "--prefer-binary",
            "--disable-pip-version-check",
            str(wheel),
        ],
        timeout_s=900,
        env=_clean_env(),
    )
    return bindir


def test_wheel_bundles_config_and_demo(wheel):
    """The wheel holds the lookup tables and the demo inside the package, and not the demo's
    generators (tools/, a checkout's own)."""
    names = set(zipfile.ZipFile(wheel).namelist())
    for name in BUNDLED:
        assert name in names
    assert not any(name.startswith("tools/") or "make_demo" in name for name in names)


def test_wheel_carries_the_map_assets(wheel):
    """The vendored Leaflet and jQuery (inlined into map.html) and their licences are packed."""
    names = set(zipfile.ZipFile(wheel).namelist())
    for name in (
        "leaflet/leaflet.js",
        "leaflet/leaflet.css",
        "leaflet/LICENSE",
        "leaflet/images/layers.png",
        "jquery/jquery.slim.min.js",
        "jquery/LICENSE.txt",
    ):
        assert f"siting/_assets/{name}" in names


def test_installed_demo_runs_from_an_empty_folder(installed, tmp_path):
    """`siting demo --quiet` from the installed wheel, in an empty folder: ./maps/demo/."""
    work = tmp_path / "empty"
    work.mkdir()
    exe = installed / ("siting.exe" if os.name == "nt" else "siting")
    _run([str(exe), "demo", "--quiet"], timeout_s=600, cwd=work, env=_clean_env())
    assert (work / "maps" / "demo" / "sites.csv").is_file()
    # the demo came from the installed wheel, not from this checkout: the installed siting's
    # demo folder lies in the fresh venv, and its scenario is the one run.json hashes
    python = installed / ("python.exe" if os.name == "nt" else "python")
    where = _run(
        [str(python), "-c", "from siting.readers.resources import demo_dir; print(demo_dir())"],
        timeout_s=120,
        cwd=work,
        env=_clean_env(),
    ).stdout.strip()
    demo = Path(where)
    assert installed.parent in demo.parents and REPO not in demo.parents
    text = (work / "maps" / "demo" / "run.json").read_text(encoding="utf-8")
    record = json.loads(text)
    scenario = record["inputs"]["scenario"]
    assert scenario["path"] == "scenario.toml"  # relative to its folder: nothing of the machine
    assert scenario["sha256"] == hashlib.sha256((demo / "scenario.toml").read_bytes()).hexdigest()
    assert str(installed.parent) not in text and str(REPO) not in text
