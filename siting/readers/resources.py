"""Where the bundled config tables and demo data live.

In a wheel they are packed under ``siting/_bundled``; in a source checkout (editable install or
running from the repo) they are the top-level ``config/`` and ``data_demo/`` folders. Nothing else.
"""

from __future__ import annotations

from pathlib import Path

_PACKAGE_DIR = Path(__file__).resolve().parent.parent  # siting/


def _bundled(name: str) -> Path:
    packed = _PACKAGE_DIR / "_bundled" / name
    if packed.is_dir():
        return packed
    checkout = _PACKAGE_DIR.parent / name
    if checkout.is_dir():
        return checkout
    raise FileNotFoundError(f"siting installation is incomplete: no {name}/ folder found")


def config_dir() -> Path:
    """Folder holding the bundled lookup tables (emission factors, abatement, critical loads...).

    Returns
    -------
    Path
        ``siting/_bundled/config`` in an installed wheel, ``config/`` in a checkout.
    """
    return _bundled("config")


def demo_dir() -> Path:
    """Folder holding the invented demo scenario.

    Returns
    -------
    Path
        ``siting/_bundled/data_demo`` in an installed wheel, ``data_demo/`` in a checkout.
    """
    return _bundled("data_demo")
