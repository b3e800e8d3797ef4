"""Error and warning types of siting, and the collection of a run's warnings.

Every error a user can cause derives from :class:`SitingError`; the CLI turns one into a single
line on stderr and exit code 2. Subclasses also inherit the builtin they resemble, so callers may
catch either.

Every warning derives from :class:`SitingWarning` (a UserWarning) and is issued with
``warnings.warn`` where the condition is found. Each run collects the ones it raised
(:func:`collect_warnings`, :func:`collecting_warnings`) onto its result's ``warnings`` -- the
messages in the order raised, each once -- and issues them on, so Python's own warning display
and filters see them too. Messages name Python parameters and scenario keys, never command-line
options: an error or warning lists the parameters it names (``parameters``) and the command line
shows each as its option.
"""

from __future__ import annotations

import functools
import sys
import warnings
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager


class SitingError(Exception):
    """Base class of all errors raised for bad input or an impossible request.

    Parameters
    ----------
    *args
        The message (as for Exception).
    parameters : iterable of str, optional
        The Python parameters the message names, written as it writes them (e.g.
        ``("memory_mb", "spacing_m")``); the command line shows each as its option.
    """

    def __init__(self, *args, parameters: Iterable[str] = ()) -> None:
        super().__init__(*args)
        self.parameters = tuple(parameters)


class InputError(SitingError, ValueError):
    """A scenario, table or data file holds a value that is wrong, missing or out of range."""


class InputFileError(SitingError, FileNotFoundError):
    """A file named by the user does not exist or cannot be read."""


class OutputExistsError(SitingError, FileExistsError):
    """The output folder must not be written: it exists and may not be replaced, another run
    is writing it, or there is no room or permission."""


class AssetError(SitingError, RuntimeError):
    """A page links a script or style sheet that siting cannot inline, or a vendored file is
    missing; the map would not work offline, so nothing is written."""


class SitingWarning(UserWarning):
    """Base class of siting's warnings: the run goes on, but an input or a result needs a look.

    A run keeps the ones it raised on its result (``result.warnings``; the outputs list them)
    and issues them on. Filter them as any warning: ``warnings.simplefilter("ignore",
    SitingWarning)`` hides them from the display (the result still holds them);
    ``warnings.simplefilter("error", SitingWarning)`` raises one as an exception where it
    is found.

    Parameters
    ----------
    *args
        The message (as for Warning).
    parameters : iterable of str, optional
        The Python parameters the message names, as for :class:`SitingError`.
    """

    def __init__(self, *args, parameters: Iterable[str] = ()) -> None:
        super().__init__(*args)
        self.parameters = tuple(parameters)


class InputWarning(SitingWarning):
    """An input is legal but doubtful, or was repaired or completed to be used: an invalid
    polygon repaired, a designation no tier lists (the strictest tier used), a reduction
    claimed without a basis, a name that matches no site."""


class WeatherWarning(InputWarning):
    """The weather data are legal but doubtful: a record shorter than a year, many calms or
    long gaps, class speeds raised to the floor, directions that fit the sectors unevenly."""


class AccuracyWarning(SitingWarning):
    """The run covers or resolves less than asked: a site outside the grid, sample points of
    a very large site spaced wider than asked."""


class WarningText(str):
    """A collected warning's message: the text itself (a ``str``, as the outputs write it),
    with the warning's ``category`` and the ``parameters`` it names.

    Parameters
    ----------
    text : str
        The message.
    category : type, optional
        The warning's class (default :class:`SitingWarning`).
    parameters : iterable of str, optional
        The Python parameters the message names.
    """

    def __new__(
        cls, text: str, category: type = SitingWarning, parameters: Iterable[str] = ()
    ) -> WarningText:
        self = super().__new__(cls, text)
        self.category = category
        self.parameters = tuple(parameters)
        return self


def unique_messages(messages: Iterable[str]) -> list[str]:
    """The messages in their order, each text once (the first kept).

    Parameters
    ----------
    messages : iterable of str

    Returns
    -------
    list of str
    """
    kept: dict[str, str] = {}
    for message in messages:
        kept.setdefault(str(message), message)
    return list(kept.values())


class CollectedWarnings:
    """The siting warnings raised inside one :func:`collect_warnings` block.

    Filled as they are raised; ``messages`` is complete once the block has ended.
    """

    def __init__(self) -> None:
        self.log: list[warnings.WarningMessage] = []

    @property
    def records(self) -> list[warnings.WarningMessage]:
        """The SitingWarnings raised, in order, each message once."""
        seen: set[str] = set()
        kept = []
        for record in self.log:
            text = str(record.message)
            if issubclass(record.category, SitingWarning) and text not in seen:
                seen.add(text)
                kept.append(record)
        return kept

    @property
    def messages(self) -> list[WarningText]:
        """The messages of :attr:`records`, with their category and parameters."""
        return [
            WarningText(str(r.message), r.category, getattr(r.message, "parameters", ()))
            for r in self.records
        ]

    def reissue(self) -> None:
        """Issue the collected warnings again, through the filters in force now."""
        for record in self.records:
            _reissue(record)


def _module_name(filename: str) -> str | None:
    """The name of the loaded module a file is, for the filters that match on it."""
    for name, module in list(sys.modules.items()):
        if getattr(module, "__file__", None) == filename:
            return name
    return None


def _reissue(record: warnings.WarningMessage) -> None:
    warnings.warn_explicit(
        record.message,
        record.category,
        record.filename,
        record.lineno,
        module=_module_name(record.filename),
        source=record.source,
    )


def _error_filters() -> list[tuple]:
    """The filters in force that turn a SitingWarning into an error, up to the first one
    about siting warnings that does not (a later one could not apply to all of them)."""
    kept = []
    for entry in warnings.filters:
        action, category = entry[0], entry[2]
        if not (issubclass(category, SitingWarning) or issubclass(SitingWarning, category)):
            continue
        if action != "error":
            break
        kept.append(entry)
    return kept


@contextmanager
def collect_warnings(reissue: bool = True) -> Iterator[CollectedWarnings]:
    """Collect the SitingWarnings raised inside the block.

    Every SitingWarning is recorded, each time it is raised (``"always"``, so a second run in
    one session sees them again), whatever the display filters say -- except that a filter
    turning it into an error still raises it where it is found. Other warnings (numpy's
    RuntimeWarning, a library's deprecation) are not collected: they pass on to the display
    as they came. When the block ends, each collected message is issued once more through the
    filters in force outside (unless ``reissue`` is false), so an enclosing run collects it
    too and a notebook shows it.

    Parameters
    ----------
    reissue : bool
        Issue the collected warnings on when the block ends (default True).

    Yields
    ------
    CollectedWarnings
        Its ``messages`` are the warnings' texts in the order raised, each once.
    """
    found = CollectedWarnings()
    errors = _error_filters()
    try:
        with warnings.catch_warnings(record=True) as log:
            found.log = log
            warnings.simplefilter("always", SitingWarning)
            for action, message, category, module, lineno in reversed(errors):
                warnings.filterwarnings(
                    action,
                    message.pattern if message is not None else "",
                    category,
                    module.pattern if module is not None else "",
                    lineno,
                )
            yield found
    finally:
        passed = set()
        for record in found.log:
            if not issubclass(record.category, SitingWarning):
                warnings.showwarning(
                    record.message, record.category, record.filename, record.lineno,
                    record.file, record.line,
                )  # fmt: skip
            elif reissue and str(record.message) not in passed:
                passed.add(str(record.message))
                _reissue(record)


def collecting_warnings(run: Callable) -> Callable:
    """Decorator of a run: the SitingWarnings raised while it runs go onto its result.

    The result's ``warnings`` (a list of str) becomes the ones it already holds followed by
    the messages collected (:func:`collect_warnings`), each text once.

    Parameters
    ----------
    run : callable
        A function returning an object with a ``warnings`` list.

    Returns
    -------
    callable
        The run with the same signature.
    """

    @functools.wraps(run)
    def collected(*args, **kwargs):
        with collect_warnings() as found:
            result = run(*args, **kwargs)
        result.warnings = unique_messages([*result.warnings, *found.messages])
        return result

    return collected


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
