"""Where the bundled config tables and demo data live: inside the package, found with importlib.resources.

``siting/config/`` holds the lookup tables and ``siting/data_demo/`` the invented demo scenario,
in a checkout and in an installed wheel alike. Nothing else.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path


def _bundled(name: str) -> Path:
    folder = resources.files("siting") / name
    if not isinstance(folder, Path):  # a package imported from a zip archive
        raise FileNotFoundError(
            f"siting's bundled {name}/ folder is not on disk ({folder}); install siting as a "
            "folder (pip install), not inside a zip archive"
        )
    if not folder.is_dir():
        raise FileNotFoundError(f"siting installation is incomplete: no {folder} folder")
    return folder


def config_dir() -> Path:
    """Folder holding the bundled lookup tables (emission factors, abatement, critical loads...).

    Returns
    -------
    Path
        ``siting/config`` of the installed package.
    """
    return _bundled("config")


def demo_dir() -> Path:
    """Folder holding the invented demo scenario.

    Returns
    -------
    Path
        ``siting/data_demo`` of the installed package.
    """
    return _bundled("data_demo")
