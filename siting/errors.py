"""Error types of siting.

Every error a user can cause derives from :class:`SitingError`; the CLI turns one into a single
line on stderr and exit code 2. Subclasses also inherit the builtin they resemble, so callers may
catch either.
"""

from __future__ import annotations


class SitingError(Exception):
    """Base class of all errors raised for bad input or an impossible request."""


class InputError(SitingError, ValueError):
    """A scenario, table or data file holds a value that is wrong, missing or out of range."""


class InputFileError(SitingError, FileNotFoundError):
    """A file named by the user does not exist or cannot be read."""


class OutputExistsError(SitingError, FileExistsError):
    """The output folder exists and --overwrite was not given."""


class AssetError(SitingError, RuntimeError):
    """A page links a script or style sheet that siting cannot inline, or a vendored file is
    missing; the map would not work offline, so nothing is written."""


class SitingWarning(UserWarning):
    """Legal but doubtful input; collected and listed in the outputs."""


_WORDING = {
    "greater_than_equal": lambda ctx: f"must be >= {ctx.get('ge')}",
    "greater_than": lambda ctx: f"must be > {ctx.get('gt')}",
    "less_than_equal": lambda ctx: f"must be <= {ctx.get('le')}",
    "less_than": lambda ctx: f"must be < {ctx.get('lt')}",
    "float_parsing": lambda ctx: "must be a number",
    "float_type": lambda ctx: "must be a number",
    "finite_number": lambda ctx: "must be a finite number",
    "int_parsing": lambda ctx: "must be a whole number",
    "int_type": lambda ctx: "must be a whole number",
    "bool_type": lambda ctx: "must be true or false",
    "bool_parsing": lambda ctx: "must be true or false",
    "string_type": lambda ctx: "must be text in quotes",
    "literal_error": lambda ctx: f"must be one of {ctx.get('expected')}",
    "too_short": lambda ctx: (
        "must not be empty"
        if ctx.get("min_length", 1) <= 1
        else f"must have at least {ctx['min_length']} items"
    ),
    "string_too_short": lambda ctx: "must not be empty",
    "list_type": lambda ctx: "must be a list [...]",
    "tuple_type": lambda ctx: "must be a list [...]",
    "too_long": lambda ctx: f"must have at most {ctx.get('max_length')} items",
    "model_type": lambda ctx: "must be a table of keys",
    "dict_type": lambda ctx: "must be a table of keys",
}


def validation_wording(error: dict) -> str:
    """A pydantic error in plain words with the offending value: "must be >= 0, got -1"
    (the scenario's and the lookup tables' messages share it)."""
    kind, ctx, got = error["type"], error.get("ctx") or {}, error.get("input")
    wording = _WORDING.get(kind)
    if wording is None:
        msg = error["msg"].removeprefix("Value error, ")
        return msg if isinstance(got, (dict, list)) else f"{msg}, got {got!r}"
    return f"{wording(ctx)}, got {got!r}"
