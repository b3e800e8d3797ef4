"""Offline assets of map.html: vendored Leaflet and jQuery, inlined into the page.

folium links its JavaScript and CSS from CDNs, so its pages are blank without a network. This
adapter takes a page folium has rendered and replaces each ``<script src=...>`` and
``<link href=...>`` by the content of a file vendored under ``siting/_assets/`` (where each file
comes from and how to refresh it: ``_assets/README.md``). Links the map does not need
(Bootstrap, icon fonts, awesome-markers) are left out. A link this module does not know raises
:class:`~siting.errors.AssetError` naming the URL: better no map than one that is blank offline.
Tile URLs inside scripts are data, not assets, and stay; the map shows without them.

Each inlined block starts with a comment naming the npm package and version it came from and
the full licence text of that library. What is drawn on the map lives in :mod:`siting.presentation.webmap`.
"""

from __future__ import annotations

import base64
import html
import mimetypes
import re
from dataclasses import dataclass
from functools import cache
from pathlib import Path

from siting.errors import AssetError

__all__ = ["inline_assets"]

_ASSETS_DIR = Path(__file__).resolve().parent.parent / "_assets"


@dataclass(frozen=True)
class _Library:
    """A vendored npm package: where its files sit under _assets/ and its licence."""

    folder: str
    package: str  # name@version in the npm registry
    licence_spdx: str
    licence_file: str


_LEAFLET = _Library("leaflet", "leaflet@1.9.4", "BSD-2-Clause", "LICENSE")
_JQUERY = _Library("jquery", "jquery@3.7.1", "MIT", "LICENSE.txt")


@dataclass(frozen=True)
class _Asset:
    """A script or style sheet folium may link, and the vendored file that replaces it.

    Without ``library`` and ``file`` the link is left out, for the reason given in ``why``.
    """

    url_pattern: str  # regular expression searched in the linked URL
    why: str
    library: _Library | None = None
    file: str | None = None  # path under the library folder
    blank_urls: tuple[str, ...] = ()  # CSS url() targets not vendored, replaced by `none`


#: Every script and style sheet folium 0.15-0.20 links by default (read from their folium.py
#: _default_js and _default_css). Kept libraries are matched on the major version vendored; a
#: new major version is an unknown asset, so it is reviewed, not guessed.
_ASSETS: tuple[_Asset, ...] = (
    _Asset(
        r"/leaflet(@1\.[\d.]+)?/dist/leaflet\.js$",
        why="the map itself",
        library=_LEAFLET,
        file="leaflet.js",
    ),
    _Asset(
        r"/leaflet(@1\.[\d.]+)?/dist/leaflet\.css$",
        why="map panes, controls, popups",
        library=_LEAFLET,
        file="leaflet.css",
        # Only Leaflet's default L.marker reads this image; the map draws CircleMarkers.
        blank_urls=("images/marker-icon.png",),
    ),
    _Asset(
        r"/jquery-3\.\d+\.\d+(\.min)?\.js$",
        # The slim build lacks only $.ajax, which GeoJson(embed=False) calls to fetch its data
        # over the network: refused below (_UNSUPPORTED).
        why="folium builds popup content with $(`<div>...</div>`)[0]",
        library=_JQUERY,
        file="jquery.slim.min.js",
    ),
    _Asset(
        r"/bootstrap@5[^/]*/dist/js/bootstrap\.bundle(\.min)?\.js$",
        why="no Bootstrap component on the map",
    ),
    _Asset(
        r"/bootstrap@5[^/]*/dist/css/bootstrap(\.min)?\.css$",
        why="the title, legend and popups carry their own CSS",
    ),
    _Asset(
        r"/bootstrap/3\.[\d.]+/css/bootstrap(\.min)?\.css$",  # folium 0.15 only
        why="the title, legend and popups carry their own CSS",
    ),
    _Asset(r"/bootstrap-glyphicons\.css$", why="icon font of folium.Icon markers, not drawn"),
    _Asset(
        r"/fontawesome-free@[^/]*/css/all(\.min)?\.css$",
        why="icon font of folium.Icon markers, not drawn",
    ),
    _Asset(
        r"/leaflet\.awesome-markers(\.min)?\.(js|css)$",
        why="folium.Icon markers, not drawn (sources are CircleMarkers)",
    ),
    _Asset(
        r"/leaflet\.awesome\.rotate(\.min)?\.css$",
        why="rotation of folium.Icon markers, not drawn",
    ),
)

#: Code that would throw in the browser without a left-out asset, stopping every layer after
#: it; found in a page, it is refused like an unknown link.
_UNSUPPORTED: tuple[tuple[str, str], ...] = (
    (
        r"\bL\.AwesomeMarkers\b",
        "folium.Icon markers need awesome-markers, which is not vendored; draw a CircleMarker",
    ),
    (r"\$\.ajax\(", "GeoJson(embed=False) loads its data over the network; embed the data"),
)

#: A <script> opening tag with an optional empty body, or a <link> tag.
_TAG = re.compile(
    r"<script\b(?P<script>[^>]*)>(?P<close>\s*</script\s*>)?|<link\b(?P<link>[^>]*)>",
    re.IGNORECASE,
)
_ATTRIBUTE = re.compile(r"""([^\s=/>]+)(?:\s*=\s*(?:"([^"]*)"|'([^']*)'|([^\s"'>]+)))?""")
_CSS_URL = re.compile(r"""url\(\s*(["']?)([^"')]+)\1\s*\)""")
_SOURCE_MAP = re.compile(r"^//# sourceMappingURL=\S+\s*$", re.MULTILINE)
#: Text that would end or confuse an inline <script> or <style> element.
_UNSAFE_INLINE = re.compile(r"</script|</style|<!--", re.IGNORECASE)


def _attributes(text: str) -> dict[str, str]:
    """Attributes of a tag, names lower-cased, values with character references resolved."""
    found = {}
    for name, double, single, bare in _ATTRIBUTE.findall(text):
        found[name.lower()] = html.unescape(double or single or bare)
    return found


def _read(relative: str) -> bytes:
    """Bytes of a vendored file; AssetError if the installation lacks it."""
    path = _ASSETS_DIR / relative
    try:
        return path.read_bytes()
    except OSError as exc:
        raise AssetError(
            f"map: vendored asset {relative!r} is missing from {_ASSETS_DIR} ({exc}); "
            "the siting installation is incomplete, reinstall it"
        ) from exc


def _css_with_data_urls(css: str, asset: _Asset) -> str:
    """The style sheet with each relative url() as a data URL of the vendored image."""
    folder = asset.library.folder

    def replace(match: re.Match) -> str:
        target = match.group(2).strip()
        if target.startswith(("#", "data:")):  # fragment (old IE behaviour) or already inline
            return match.group(0)
        if target in asset.blank_urls:
            return "none"
        if re.match(r"^([a-z][a-z0-9+.-]*:|//|/)", target, re.IGNORECASE):
            raise AssetError(f"map: {folder}/{asset.file} refers to {target!r}, outside the page")
        mime = mimetypes.guess_type(target)[0] or "application/octet-stream"
        data = base64.b64encode(_read(f"{folder}/{target}")).decode("ascii")
        return f'url("data:{mime};base64,{data}")'

    return _CSS_URL.sub(replace, css)


@cache
def _inline_block(asset: _Asset, kind: str) -> str:
    """The <script> or <style> element holding the vendored file, with its licence comment."""
    library = asset.library
    relative = f"{library.folder}/{asset.file}"
    text = _read(relative).decode("utf-8")
    licence = _read(f"{library.folder}/{library.licence_file}").decode("utf-8").strip()
    if kind == "script":
        text = _SOURCE_MAP.sub("", text)  # the .map file is not vendored
        changes = "source-map comment removed"
    else:
        text = _css_with_data_urls(text, asset)
        changes = "images inlined as data URLs"
    if _UNSAFE_INLINE.search(text) or "*/" in licence:
        raise AssetError(f"map: vendored asset {relative!r} cannot be inlined in HTML safely")
    banner = (
        f"/*! siting: {asset.file} from the npm registry package {library.package} "
        f"({changes}), vendored in siting/_assets/{relative}.\n"
        f"{library.package} licence, {library.licence_spdx}:\n\n{licence}\n*/"
    )
    tag = "script" if kind == "script" else "style"
    return f"<{tag}>\n{banner}\n{text.strip()}\n</{tag}>"


def _known_asset(url: str) -> _Asset:
    """The table entry for a linked URL; AssetError naming the URL if there is none."""
    for asset in _ASSETS:
        if re.search(asset.url_pattern, url.split("?", 1)[0].split("#", 1)[0]):
            return asset
    raise AssetError(
        f"map: the page links {url}, which siting does not vendor; the map would not "
        "work offline. Vendor it in siting/_assets/ and list it in siting/webassets.py "
        "(see siting/_assets/README.md), or stop using the folium feature that adds it"
    )


def inline_assets(page_html: str) -> str:
    """Make a page rendered by folium self-contained: inline known assets, drop unneeded ones.

    Parameters
    ----------
    page_html : str
        The page as ``folium.Map.get_root().render()`` returns it.

    Returns
    -------
    page_html : str
        The page with each linked Leaflet or jQuery file replaced by an inline ``<script>`` or
        ``<style>`` carrying the vendored file and its licence, and with the links the map
        does not need removed. ``data:`` URLs stay; so do tile URLs inside scripts.

    Raises
    ------
    AssetError
        If the page links a script or style sheet not in the table of known assets (the
        message names the URL), if it uses a feature whose asset is left out, or if a
        vendored file is missing. Nothing is returned, so nothing half-working is written.
    """
    for pattern, why in _UNSUPPORTED:
        if re.search(pattern, page_html):
            raise AssetError(f"map: the page uses {pattern!r}: {why}")
    inlined: set[_Asset] = set()

    def replace(match: re.Match) -> str:
        is_script = match.group("script") is not None
        attributes = _attributes(match.group("script") if is_script else match.group("link"))
        url = attributes.get("src" if is_script else "href")
        if url is None or url.strip().lower().startswith("data:"):
            return match.group(0)
        url = url.strip()
        if is_script and match.group("close") is None:
            raise AssetError(f"map: the page links {url} in a <script> that is not empty")
        asset = _known_asset(url)
        if asset.file is None or asset in inlined:  # left out, or inlined already
            return ""
        inlined.add(asset)
        return _inline_block(asset, "script" if asset.file.endswith(".js") else "style")

    return _TAG.sub(replace, page_html)
