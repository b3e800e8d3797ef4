"""What report.html and verify.html share: the template environment and the plain values they show.

Both pages are laid out by jinja2 templates in ``siting/presentation/templates/``: the page shell
(``page.html``, with the shared stylesheet ``shared.css``) and the macros both pages use
(``parts.html``: header cells, identifiers that may wrap, the display of one value, key/value
tables, bullet lists, verdict badges, figures, sections). This module holds the environment that
renders them (:func:`render`: autoescape on, an undefined name fails loudly) and the helpers that
turn values into what the templates show, as plain text or small plain structures, never HTML:
readable labels made from column and key names (their unit suffix in brackets), the display of
one value of a key/value listing (:func:`display_value`: text, or a small table of shares or of
records), the text shown for any value (:func:`text`) and the CSS class and hint of each
screening verdict.

What does not live here: the sections and the tables specific to one page, which are prepared in
:mod:`siting.presentation.report` and :mod:`siting.presentation.verify_report` and laid out by
their own templates. Number formatting (significant digits, percentages, the text shown for a
missing value) belongs to :mod:`siting.presentation.formats`, which this module calls; no checking
or physics happens here.
"""

from __future__ import annotations

import html
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import TYPE_CHECKING, Any, NamedTuple

import jinja2
import numpy as np

from siting.presentation.formats import MISSING_TEXT, format_for_column, format_percent, is_missing

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "NOT_APPLICABLE",
    "UNIT_SUFFIXES",
    "VERDICT_STYLE",
    "Cell",
    "Joined",
    "MiniTable",
    "Verdict",
    "display_value",
    "filled",
    "is_number",
    "is_share",
    "key_values",
    "macro",
    "number_cell",
    "plain_label",
    "render",
    "text",
    "verdict",
]

#: CSS class and plain-words hint per verdict (styling of a verdict cell or badge).
VERDICT_STYLE = {
    "passes": ("verdict-below", "passes under its rule set"),
    "does not pass": ("verdict-above", "does not pass: needs further assessment"),
    "not assessed": ("verdict-none", "no PC figure for this site"),
    # the words of tables written before rule sets (no passes column)
    "below threshold": ("verdict-below", "insignificant at screening"),
    "above threshold": ("verdict-above", "needs further assessment"),
}

#: Shown where a value does not apply: a step that does not apply to a source in a
#: transposed table (e.g. no abatement), or an empty list.
NOT_APPLICABLE = "–"

#: Unit suffixes of column names and the unit shown in a label, longest first. `_fraction` and
#: `_share` values are shown as percentages (see :func:`display_value`).
UNIT_SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_kg_n_ha_yr", "kg N/ha/yr"),
    ("_mol_n_ha_yr", "mol N/ha/yr"),
    ("_keq_ha_yr", "keq/ha/yr"),
    ("_kg_per_place_yr", "kg/place/yr"),
    ("_ug_m3", "µg/m³"),
    ("_m3_yr", "m³/yr"),
    ("_kg_yr", "kg/yr"),
    ("_g_s", "g/s"),
    ("_m_s", "m/s"),
    ("_percent", "%"),
    ("_fraction", "%"),
    ("_deg", "°"),
    ("_ha", "ha"),
    ("_m", "m"),
    ("_s", "s"),
)


# --------------------------------------------------------------------------------------------
# Plain structures the templates lay out (parts.html knows each of them)
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class MiniTable:
    """A small table inside a value: header texts and rows of values (text or nested views)."""

    head: tuple[str, ...]
    rows: tuple[tuple[Any, ...], ...]


@dataclass(frozen=True, slots=True)
class Joined:
    """Values shown one after the other with `sep` between them (used only when one of them is
    a :class:`MiniTable`; all-text lists are joined into one text)."""

    parts: tuple[Any, ...]
    sep: str


class Cell(NamedTuple):
    """One table cell: what it shows (text or a value view), its CSS class, and whether its
    text is an identifier that may wrap after underscores (``partly_<wbr>slatted``). A tuple, so
    that a template can unpack it in a loop (quicker than reading attributes, over thousands of
    rows)."""

    text: Any
    css: str = ""
    wrap: bool = False


class Verdict(NamedTuple):
    """A screening verdict as shown: its text, the CSS class of its badge, its hint ('' none)."""

    text: str
    css: str
    hint: str


# --------------------------------------------------------------------------------------------
# The template environment
# --------------------------------------------------------------------------------------------


class _Escaped(str):
    """Text already escaped: the ``__html__`` protocol tells autoescape to output it as it is."""

    __slots__ = ()

    def __html__(self) -> str:
        return str(self)


def _escaped(value: Any) -> Any:
    """Each ``{{ value }}`` before it is output: text escaped as the pages always were.

    With autoescape on, jinja2 would escape plain text itself, but with markupsafe's entities
    (``&#34;``, ``&#39;``); escaping here with :func:`html.escape` keeps the pages' text as it
    was before they moved to templates (``&quot;``, ``&#x27;``), byte for byte, and autoescape
    passes the result through. None and NaN show as ``n/a`` (text is prepared with :func:`text`
    anyway; this is the backstop), an empty string stays empty (a CSS class may be ''); markup
    from a template (a macro's output) passes unchanged; an undefined name still fails loudly.
    """
    if isinstance(value, jinja2.Undefined) or hasattr(value, "__html__"):
        return value
    if value is None or (isinstance(value, float) and value != value):
        return MISSING_TEXT
    if type(value) in (str, int):  # the same texts recur over thousands of rows: remembered
        return _escaped_text(value)
    return _Escaped(html.escape(str(value), quote=True))


@lru_cache(maxsize=1 << 16, typed=True)
def _escaped_text(value: str | int) -> _Escaped:
    """:func:`_escaped` of a str or int, remembered."""
    return _Escaped(html.escape(str(value), quote=True))


@lru_cache(maxsize=1)
def _environment() -> jinja2.Environment:
    """The one environment of both pages (templates are compiled once per process)."""
    environment = jinja2.Environment(
        loader=jinja2.PackageLoader("siting.presentation", "templates"),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        finalize=_escaped,
        trim_blocks=True,  # block tags on lines of their own leave no blank lines
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    environment.tests["mini_table"] = lambda value: isinstance(value, MiniTable)
    environment.tests["joined"] = lambda value: isinstance(value, Joined)
    return environment


def render(template: str, /, **context: Any) -> str:
    """Render one template of ``siting/presentation/templates/`` with `context` (plain values).

    Raises
    ------
    jinja2.UndefinedError
        If the template uses a name that `context` does not give.
    """
    return _environment().get_template(template).render(**context)


def macro(template: str, name: str, /, *args: Any) -> str:
    """Render one macro of a template on its own (a part of a page, e.g. for a check of it)."""
    return str(getattr(_environment().get_template(template).module, name)(*args))


# --------------------------------------------------------------------------------------------
# Values as text
# --------------------------------------------------------------------------------------------


def text(value: Any) -> str:
    """The text shown for any value: ``n/a`` for None/NaN, else ``str(value)`` (not escaped:
    the templates escape)."""
    if is_missing(value):
        return MISSING_TEXT
    return str(value)


def plain_label(key: str) -> str:
    """A readable label made from a column or key name, its unit suffix in brackets.

    ``"calm_fraction"`` -> ``"Calm [%]"``, ``"distance_m"`` -> ``"Distance [m]"``.
    """
    name = str(key)
    unit = ""
    for suffix, shown in UNIT_SUFFIXES:
        if name.lower().endswith(suffix) and len(name) > len(suffix):
            name, unit = name[: -len(suffix)], shown
            break
    words = name.replace("_", " ").strip()
    words = words[:1].upper() + words[1:]
    return f"{words} [{unit}]" if unit else words


def is_share(key: str) -> bool:
    """True when a key names a dimensionless share 0..1 (shown as a percentage)."""
    name = str(key).lower()
    return name.endswith(("_fraction", "_share")) or name.startswith("share")


def is_number(value: Any) -> bool:
    """True for a real number, finite or infinite (bool excluded), that is not missing."""
    return (
        isinstance(value, (int, float, np.integer, np.floating))
        and not isinstance(value, (bool, np.bool_))
        and not is_missing(value)
    )


def _compass(direction_deg: float) -> str:
    """16-point compass name of a direction [deg clockwise from north]."""
    points = ("N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE",
              "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW")  # fmt: skip
    return points[int(round(float(direction_deg) / 22.5)) % 16]


def _joined(parts: Sequence[Any], sep: str) -> Any:
    """`parts` one after the other: one text when all are text, else a :class:`Joined`."""
    if all(isinstance(part, str) for part in parts):
        return sep.join(parts)
    return Joined(tuple(parts), sep)


def display_value(key: str, value: Any) -> Any:
    """One value of a key/value listing as shown, formatted by what its key names.

    Shares and fractions become percentages, lists are joined with ", ", a mapping of shares
    becomes a small row of percentages (a :class:`MiniTable`), a list of mappings a small table
    of them, other mappings "key: value" pairs, and a prevailing direction gets its compass
    point. Returns text, or a :class:`MiniTable` / :class:`Joined` where a table is part of it;
    nothing is escaped (the template ``parts.html`` shows it with the macro ``value``).
    """
    if isinstance(value, Mapping):
        if value and is_share(key) and all(is_number(v) for v in value.values()):
            cells = tuple(f"{format_percent(100.0 * float(v))} %" for v in value.values())
            return MiniTable(head=tuple(text(k) for k in value), rows=(cells,))
        pairs = [_joined([f"{text(k)}: ", display_value(str(k), v)], "") for k, v in value.items()]
        return _joined(pairs, ", ")
    if isinstance(value, (list, tuple)) and value and all(isinstance(v, Mapping) for v in value):
        columns = list(dict.fromkeys(k for row in value for k in row))
        return MiniTable(
            head=tuple(plain_label(c) for c in columns),
            rows=tuple(tuple(display_value(c, row.get(c)) for c in columns) for row in value),
        )
    if isinstance(value, (list, tuple, np.ndarray)):
        return _joined([display_value(key, v) for v in value], ", ") or NOT_APPLICABLE
    if is_share(key) and is_number(value):
        return format_percent(100.0 * float(value))
    shown = format_for_column(value, key)
    if str(key).endswith("from_deg") and is_number(value):
        shown += f" ({_compass(float(value))})"
    return shown


def key_values(mapping: Mapping[str, Any], labels: Mapping[str, str]) -> list[tuple[str, Any]]:
    """The rows of a key/value table: (plain-words label, the value as shown) per entry."""
    return [
        (labels.get(str(key), plain_label(str(key))), display_value(str(key), value))
        for key, value in mapping.items()
    ]


def verdict(value: Any, passes: Any = None) -> Verdict:
    """A screening verdict as shown: its text (``n/a`` when missing), badge class and hint;
    styled by ``passes`` (the rule set's) when given, else by the words."""
    shown = "" if is_missing(value) else str(value)
    key = shown.strip().lower()
    if key != "not assessed" and shown and passes is not None and not is_missing(passes):
        key = "passes" if str(passes).strip().lower() in ("true", "1") else "does not pass"
    css, hint = VERDICT_STYLE.get(key, ("verdict-none", ""))
    return Verdict(shown or MISSING_TEXT, css, hint)


def filled(frame: pd.DataFrame, column: str) -> bool:
    """True when `frame` has `column` and some value in it is not missing."""
    return column in frame and any(not is_missing(v) for v in frame[column])


def number_cell(value: Any, column: str, css: str = "") -> Cell:
    """A right-aligned table cell of a number formatted by its column name."""
    return Cell(format_for_column(value, column), " ".join(c for c in ("num", css) if c))
