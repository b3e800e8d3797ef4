"""The scenario file's [[option]] tables: variants of the proposal computed in the same run.

An option is a name and changes to the base scenario's sources: ``[option.change.<source id>]``
holds any [[source]] key (``abatement = "none"`` drops a technique, ``include = false`` leaves
the source out), and a [[source]] with ``options = ["<name>", ...]`` exists in those options
only. :func:`apply_option` makes an option's list of sources, each checked by
:class:`~siting.readers.scenario_sources.SourceSpec` as if it had been written so.
"""

from __future__ import annotations

import re

from pydantic import (
    Field,
    StrictBool,
    ValidationError,
    create_model,
    field_validator,
)
from pydantic.fields import FieldInfo

from siting.readers.scenario_sections import _Section
from siting.readers.scenario_sources import SourceSpec

#: An option's name: it becomes part of file names (difference_<name>.tif), so letters,
#: digits, "_" and "-" only, starting with a letter or digit, at most 40 characters.
OPTION_NAME = r"^[A-Za-z0-9][A-Za-z0-9_-]{0,39}$"

#: The base scenario's name beside its options (in options.csv): no option may take it.
BASE_NAME = "base"

#: ``abatement = "none"`` in a change drops the source's technique and what goes with it.
NO_ABATEMENT = "none"

#: Keys that belong to a technique: dropped with it, and with a change of technique unless the
#: change states them again (a claimed reduction is a claim for one technique).
_TECHNIQUE_KEYS = ("reduction_percent", "reduction_basis", "treated_air_fraction")
_DESIGN_KEYS = ("scrubber_design_share",)
_FACTOR_KEYS = ("livestock", "housing", "places")


def _optional(info: FieldInfo) -> tuple:
    """A SourceSpec field as an optional change: same type and bounds, default None."""
    return (info.annotation | None, FieldInfo.merge_field_infos(info, default=None))


#: The [[source]] keys an option may change: all but ``id`` and ``options``.
_CHANGEABLE = [name for name in SourceSpec.model_fields if name not in ("id", "options")]

_CHANGE_DOC = """[option.change.<source id>]: what an option changes in one source.

    Any [[source]] key but ``id`` and ``options`` (the same types and bounds), each None when
    the option leaves it as it is, and ``include``.

    Attributes
    ----------
    include : bool
        False leaves the source out of the option (default True).
    abatement : str, optional
        A technique id, or "none" to drop the source's technique (with its claimed reduction,
        treated share and design share).
""" + "".join(
    f"    {name} : optional\n        As the [[source]] key {name}; None leaves it unchanged.\n"
    for name in _CHANGEABLE
    if name != "abatement"
)

SourceChange = create_model(
    "SourceChange",
    __base__=_Section,
    __doc__=_CHANGE_DOC,
    include=(StrictBool, True),
    **{name: _optional(SourceSpec.model_fields[name]) for name in _CHANGEABLE},
)


class OptionSpec(_Section):
    """One [[option]]: a named variant of the proposal.

    Attributes
    ----------
    name : str
        Letters, digits, "_" and "-" (at most 40 characters): it names the option's files.
    description : str, optional
        What the option is, in words (at most 200 characters).
    change : dict of str to SourceChange
        Source id -> its changes in this option.
    """

    name: str
    description: str | None = Field(None, min_length=1, max_length=200)
    change: dict[str, SourceChange] = {}  # type: ignore[valid-type]

    @field_validator("name")
    @classmethod
    def _file_name(cls, name: str) -> str:
        if not re.fullmatch(OPTION_NAME, name):
            raise ValueError(
                "an option's name names its files: letters, digits, _ and - only, starting "
                "with a letter or digit, at most 40 characters"
            )
        if name.lower() == BASE_NAME:
            raise ValueError(f'"{BASE_NAME}" names the base scenario; give the option another name')
        return name


def apply_option(
    option: OptionSpec, sources: list[SourceSpec], option_sources: list[SourceSpec]
) -> list[SourceSpec]:
    """The sources of one option: the base's with the option's changes, plus its own.

    Parameters
    ----------
    option : OptionSpec
        The option.
    sources : list of SourceSpec
        The base scenario's sources.
    option_sources : list of SourceSpec
        The [[source]] tables that exist in some options only (``options = [...]``).

    Returns
    -------
    list of SourceSpec
        In the base's order, then the option's own sources; a source with ``include = false``
        is left out. Each is validated again as a whole.

    Raises
    ------
    ValueError
        A change names a source the option does not have, or leaves a source that is not
        valid (the message names the option and the source).
    """
    own = [s for s in option_sources if option.name in (s.options or [])]
    known = {s.id: s for s in [*sources, *own]}
    for sid in option.change:
        if sid not in known:
            raise ValueError(
                f'option "{option.name}": change.{sid}: no source "{sid}" in this option '
                f"(sources: {', '.join(known)})"
            )
    changed = []
    for src in known.values():
        change = option.change.get(src.id)
        if change is not None and not change.include:
            continue
        changed.append(src if change is None else _changed(option.name, src, change))
    return changed


def _changed(option_name: str, src: SourceSpec, change) -> SourceSpec:
    """``src`` with ``change`` applied, validated as a whole source."""
    keys = src.model_dump(exclude_unset=True, exclude={"options"})
    new = change.model_dump(exclude_unset=True, exclude={"include"})
    if new.get("abatement") == NO_ABATEMENT:
        for key in ("abatement", *_TECHNIQUE_KEYS, *_DESIGN_KEYS):
            keys.pop(key, None)
        new.pop("abatement")
    elif "abatement" in new and new["abatement"] != keys.get("abatement"):
        for key in _TECHNIQUE_KEYS:
            keys.pop(key, None)
    if "nh3_kg_per_year" in new:
        for key in _FACTOR_KEYS:
            keys.pop(key, None)
    if any(key in new for key in _FACTOR_KEYS):
        keys.pop("nh3_kg_per_year", None)
    if "treated_air_fraction" in new:
        keys.pop("scrubber_design_share", None)
    if "scrubber_design_share" in new:
        keys.pop("treated_air_fraction", None)
    keys.update(new)
    try:
        return SourceSpec.model_validate(keys)
    except ValidationError as exc:
        err = exc.errors()[0]
        where = ".".join(str(k) for k in err["loc"])
        msg = err["msg"].removeprefix("Value error, ")
        raise ValueError(
            f'option "{option_name}", source "{src.id}": {where + ": " if where else ""}{msg}'
        ) from None
