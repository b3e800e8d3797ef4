"""Text on the web maps: escaping of user text, formatted figures and popup tables.

Every text that comes from a user file goes through :func:`escape_text` before it reaches a
map page. folium writes popup and tooltip content into JavaScript template literals without
escaping, so HTML escaping alone is not enough: backticks, ``$``, braces and backslashes are
turned into HTML character references too. Used by :mod:`siting.presentation.webmap` and the
modules it is split into; no physics, no folium.
"""

from __future__ import annotations

import html
import re
from collections.abc import Sequence
from typing import Any

import numpy as np

from siting.presentation.formats import format_number, is_missing

__all__ = [
    "KIND_WORDS",
    "PopupRows",
    "column_values",
    "escape_text",
    "housing_name",
    "technique_name",
    "number_or_blank",
    "number_text",
    "number_texts",
    "popup_table",
]

#: Characters that would still act inside a JavaScript template literal after html.escape.
_JS_TEMPLATE_REPLACEMENTS = (
    ("`", "&#96;"),
    ("$", "&#36;"),
    ("\\", "&#92;"),
    ("{", "&#123;"),
    ("}", "&#125;"),
)

#: Control characters, including the JavaScript line terminators U+2028 and U+2029.
_CONTROL_CHARACTERS = re.compile("[\x00-\x1f\x7f\u2028\u2029]")

#: What each kind of source is, in words, for popups and legends (our own wording).
KIND_WORDS = {
    "point": "outlet or stack (point source)",
    "volume": "house (volume source)",
    "area": "store or yard (area source)",
}

#: (label, column, unit) rows of a popup table; unit None for text. A column may be a tuple of
#: names: the first the frame has is shown.
PopupRows = tuple[tuple[str, str | tuple[str, ...], str | None], ...]


def escape_text(value: Any) -> str:
    """Neutralise user text for any place in map.html: HTML and JavaScript template literals.

    The value is HTML-escaped (``&``, ``<``, ``>``, both quotes), then the characters that still
    act inside a JavaScript template literal become numeric character references: backtick
    ``&#96;``, dollar ``&#36;``, backslash ``&#92;``, braces ``&#123;`` ``&#125;``. Control
    characters and the line terminators U+2028/U+2029 become spaces. A browser shows the
    result as the original text; neither HTML nor JavaScript can read code out of it.

    Parameters
    ----------
    value : any
        Text or any value with a ``str()``; None, NaN, pandas NA and blank text give ``""``.

    Returns
    -------
    text : str
        Safe to place in HTML, in attribute values and inside folium popups and tooltips.
    """
    if is_missing(value):
        return ""
    text = _CONTROL_CHARACTERS.sub(" ", str(value))
    text = html.escape(text, quote=True)
    for raw, reference in _JS_TEMPLATE_REPLACEMENTS:
        text = text.replace(raw, reference)
    return text


def number_text(value: Any, unit: str = "") -> str:
    """Formatted, escaped number with unit ('n/a' when missing)."""
    return escape_text(format_number(value, unit if not is_missing(value) else ""))


def number_or_blank(value: Any, unit: str = "") -> str:
    """Like :func:`number_text`, but empty text when the value is missing (the popup row is
    then left out)."""
    return "" if is_missing(value) else number_text(value, unit)


def number_texts(values: list, unit: str, blank: bool = False) -> list[str]:
    """:func:`number_text` (or :func:`number_or_blank` with ``blank``) of many values, faster:
    a value that is a number gives digits and our own unit, which need no escaping; anything
    else goes through :func:`number_text` as one value would."""
    missing = "" if blank else escape_text(format_number(None))
    unit_text = escape_text(unit)
    texts = []
    for value in values:
        if isinstance(value, (float, int, np.floating, np.integer)) and not isinstance(
            value, (bool, np.bool_)
        ):
            number = float(value)
            texts.append(missing if np.isnan(number) else f"{format_number(number)} {unit_text}")
        else:
            texts.append(number_or_blank(value, unit) if blank else number_text(value, unit))
    return texts


def popup_table(head: str, rows: Sequence[tuple[str, str]]) -> str:
    """Popup HTML from an escaped heading and (escaped label, escaped value) rows."""
    body = "".join(f"<tr><th>{label}</th><td>{value}</td></tr>" for label, value in rows)
    return f'<div class="siting-popup"><div class="head">{head}</div><table>{body}</table></div>'


def column_values(frame: Any, column: str | tuple[str, ...]) -> list:
    """A column's values as a list (all None when the frame lacks it); of a tuple of names,
    the first the frame has."""
    for name in (column,) if isinstance(column, str) else column:
        if name in frame:
            return frame[name].tolist()
    return [None] * len(frame)


def housing_name(tables: Any, livestock: Any, housing: Any) -> str:
    """The emission-factor table's words for a livestock category and housing system.

    The ``description`` of the row of config/emission_factors.toml (e.g. "Finishing pig >
    30 kg, fully slatted floor over a slurry pit"), or ``""`` without tables, ids or a
    matching row. Not escaped.

    Parameters
    ----------
    tables : Tables or None
        The run's lookup tables.
    livestock, housing : str or None
        The ids, as the scenario names them.

    Returns
    -------
    name : str
    """
    if tables is None or is_missing(livestock) or is_missing(housing):
        return ""
    for row in tables.emission_factors:
        if row.get("livestock") == livestock and row.get("housing") == housing:
            return str(row.get("description") or "")
    return ""


def technique_name(tables: Any, technique: Any) -> str:
    """The abatement table's name of a technique (config/abatement.toml ``name``, e.g. "Acid
    (chemical) air scrubber"), or ``""`` without tables, id or row. Not escaped.

    Parameters
    ----------
    tables : Tables or None
        The run's lookup tables.
    technique : str or None
        The technique id, as the scenario names it.

    Returns
    -------
    name : str
    """
    if tables is None or is_missing(technique):
        return ""
    row = tables.abatement.get(str(technique)) or {}
    return str(row.get("name") or "")
