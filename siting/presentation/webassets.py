"""Offline assets of map.html: folium configured to write vendored Leaflet and jQuery inline.

folium declares the scripts and style sheets an element needs as ``(name, url)`` pairs in its
``default_js`` and ``default_css`` (folium's ``JSCSSMixin``: ``folium.Map`` and many plugins);
when the page is rendered, each pair becomes a ``<script src=...>`` or ``<link href=...>`` from a
CDN, so the page is blank without a network. :func:`render_offline` configures the map before
folium renders it: every declared URL is looked up in :data:`_ASSETS`; a needed one is put in
the page's ``<head>`` as an element holding the content of the file vendored under
``siting/_assets/`` (where each file comes from and how to refresh it: ``_assets/README.md``),
and each element's lists are then set, on that instance only, to nothing to link. Links the map
does not need (Bootstrap, icon fonts, awesome-markers) are left out, each for the reason in the
table. The page folium renders is final: nothing is rewritten afterwards.

A URL this module does not know, a folium feature whose asset is left out, or a link that still
reaches the page raises :class:`~siting.errors.AssetError` naming it: better no map than one
that is blank offline. Tile URLs inside scripts are data, not assets, and stay; the map shows
without them. Each inlined block starts with a comment naming the npm package and version it
came from and the full licence text of that library. Last in the ``<head>`` comes siting's own
page script, ``_assets/siting/map.js`` (labels that make room for each other, popups kept clear
of the title block, the legend folded on small screens), inline like the rest. What is drawn on
the map lives in :mod:`siting.presentation.webmap`.
"""

from __future__ import annotations

import base64
import mimetypes
import re
from collections.abc import Iterator
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import TYPE_CHECKING

from siting.errors import AssetError

if TYPE_CHECKING:  # imported for annotations only
    import folium

__all__ = ["render_offline"]

_ASSETS_DIR = Path(__file__).resolve().parent.parent / "_assets"


@dataclass(frozen=True)
class _Library:
    """A vendored npm package: where its files sit under _assets/ and its licence."""

    folder: str
    package: str  # name@version in the npm registry
    licence_spdx: str
    licence_file: str


_LEAFLET = _Library("leaflet", "leaflet@1.9.4", "BSD-2-Clause", "LICENSE")
#: siting's own page script (not vendored): see its header comment.
_OWN_SCRIPT = "siting/map.js"
_JQUERY = _Library("jquery", "jquery@3.7.1", "MIT", "LICENSE.txt")


@dataclass(frozen=True)
class _Asset:
    """A script or style sheet folium may declare, and the vendored file written in its place.

    Without ``library`` and ``file`` the asset is left out, for the reason given in ``why``.
    """

    url_pattern: str  # regular expression searched in the declared URL
    why: str
    library: _Library | None = None
    file: str | None = None  # path under the library folder
    blank_urls: tuple[str, ...] = ()  # CSS url() targets not vendored, replaced by `none`


#: Every script and style sheet folium 0.15-0.20 declares by default (read from their folium.py
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
        # over the network: refused below (_refuse_unsupported).
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

_CSS_URL = re.compile(r"""url\(\s*(["']?)([^"')]+)\1\s*\)""")
_SOURCE_MAP = re.compile(r"^//# sourceMappingURL=\S+\s*$", re.MULTILINE)
#: Text that would end or confuse an inline <script> or <style> element.
_UNSAFE_INLINE = re.compile(r"</script|</style|<!--", re.IGNORECASE)


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
    """The vendored style sheet with each relative url() as a data URL of the vendored image."""
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
def _inline_block(asset: _Asset) -> str:
    """The <script> or <style> element holding the vendored file, with its licence comment."""
    library = asset.library
    relative = f"{library.folder}/{asset.file}"
    text = _read(relative).decode("utf-8")
    licence = _read(f"{library.folder}/{library.licence_file}").decode("utf-8").strip()
    is_script = asset.file.endswith(".js")
    if is_script:
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
    tag = "script" if is_script else "style"
    return f"<{tag}>\n{banner}\n{text.strip()}\n</{tag}>"


def _known_asset(url: str) -> _Asset:
    """The table entry for a declared URL; AssetError naming the URL if there is none."""
    for asset in _ASSETS:
        if re.search(asset.url_pattern, url.split("?", 1)[0].split("#", 1)[0]):
            return asset
    raise AssetError(
        f"map: the page links {url}, which siting does not vendor; the map would not "
        "work offline. Vendor it in siting/_assets/ and list it in "
        "siting/presentation/webassets.py (see siting/_assets/README.md), or stop using the "
        "folium feature that adds it"
    )


def _inline_element(block: str):
    """A branca element that renders as ``block`` verbatim.

    The text is a template *variable*, not the template: vendored code holding ``{{`` or
    ``{%`` is written as it is, never read as Jinja.
    """
    from branca.element import Element

    element = Element("{{ this.block }}")
    element.block = block
    return element


def _elements(element) -> Iterator:
    """``element`` and every element below it: children, a Figure's header, body and script,
    and the marker and icon a GeoJson or Marker holds outside its children."""
    from branca.element import Element, Figure

    yield element
    below = list(element._children.values())
    if isinstance(element, Figure):
        below += [element.header, element.html, element.script]
    for attribute in ("marker", "icon"):
        held = getattr(element, attribute, None)
        if isinstance(held, Element) and held not in below:
            below.append(held)
    for child in below:
        yield from _elements(child)


def _refuse_unsupported(element) -> None:
    """AssetError for a folium feature that would throw in the browser without a left-out
    asset, stopping every layer after it."""
    import folium

    if isinstance(element, folium.Icon):
        raise AssetError(
            "map: the page uses folium.Icon markers, which need awesome-markers; it is not "
            "vendored, draw a CircleMarker"
        )
    if isinstance(element, folium.GeoJson) and not element.embed:
        raise AssetError(
            "map: GeoJson(embed=False) loads its data over the network with $.ajax, which the "
            "vendored jQuery lacks; embed the data"
        )


def _use_vendored_assets(fmap: folium.Map) -> None:
    """Configure every element of the map's page to write vendored assets inline, none linked.

    Each declared ``(name, url)`` of an element's ``default_js`` / ``default_css`` is looked up
    (:func:`_known_asset`); a kept one goes into the page's header once, as the vendored file,
    in the order declared. Then the element's lists are replaced *on the instance* by empty
    ones, so folium links nothing; the class lists, folium's module-wide defaults, stay as
    they are for other maps.
    """
    from folium.elements import JSCSSMixin

    root = fmap.get_root()
    for element in list(_elements(root)):
        _refuse_unsupported(element)
        if not isinstance(element, JSCSSMixin):
            continue
        for _name, url in (*element.default_js, *element.default_css):
            asset = _known_asset(url)
            if asset.file is not None:  # keyed by the file: declared twice, written once
                key = f"siting_vendored_{asset.library.folder}_{asset.file}"
                root.header.add_child(_inline_element(_inline_block(asset)), name=key)
        element.default_js = []
        element.default_css = []


@cache
def _own_script_block() -> str:
    """The <script> element holding siting's own page script (``_assets/siting/map.js``)."""
    text = _read(_OWN_SCRIPT).decode("utf-8")
    if _UNSAFE_INLINE.search(text):
        raise AssetError(f"map: {_OWN_SCRIPT!r} cannot be inlined in HTML safely")
    banner = f"/*! siting: its own page script, siting/_assets/{_OWN_SCRIPT} */"
    return f"<script>\n{banner}\n{text.strip()}\n</script>"


def render_offline(fmap: folium.Map) -> str:
    """The map's page, self-contained: vendored Leaflet and jQuery inline, nothing linked.

    Parameters
    ----------
    fmap : folium.Map
        The finished map (every layer and control added); its page is configured in place.

    Returns
    -------
    page_html : str
        The page as folium renders it, with each needed Leaflet or jQuery file in an inline
        ``<script>`` or ``<style>`` carrying the vendored file and its licence, siting's own
        page script after them, and none of the assets the map does not need. ``data:`` URLs
        stay; so do tile URLs inside scripts.

    Raises
    ------
    AssetError
        If an element declares a script or style sheet not in the table of known assets (the
        message names the URL), if the map uses a feature whose asset is left out, if a
        vendored file is missing, or if folium linked a file despite the configuration (an
        element added while rendering). Nothing is returned, so nothing half-working is
        written.
    """
    from branca.element import Link

    _use_vendored_assets(fmap)
    root = fmap.get_root()
    # after Leaflet, which it extends; keyed, so a map rendered twice holds it once
    root.header.add_child(_inline_element(_own_script_block()), name="siting_own_map_js")
    page = root.render()
    # folium adds a declared asset to the header as a branca Link while rendering; after the
    # configuration above none may be there.
    for child in root.header._children.values():
        if isinstance(child, Link):
            _known_asset(child.url)  # an unknown URL is named as such
            raise AssetError(
                f"map: the page links {child.url} although siting configured folium to "
                "write its assets inline; the map would not work offline"
            )
    return page
