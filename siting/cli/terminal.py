"""What every command shares on the terminal: exit codes, warning lines, user text shown as
itself (never as rich markup), and how many rows a summary prints.
"""

from __future__ import annotations

import re


def plain(text) -> str:
    """User text (site names, messages) shown as itself in rich output, never as markup."""
    from rich.markup import escape

    return escape(str(text))


def with_flags(message, flags: dict[str, str] | None, parameters=None) -> str:
    """A library message as the command line shows it: each Python parameter it names written
    as the command's option (``memory_mb`` -> ``--memory-mb``).

    ``flags`` is the command's {parameter: option} (``options.flags_by_parameter``). Only the
    parameters the error or warning lists (its ``parameters``; or ``parameters`` given here)
    are replaced, and only those the command has an option for; a name inside a longer word
    or path, or written as a scenario key (``[weather] utc_offset_h``, ``grid.margin_m``), is
    left as it is.
    """
    text = str(message)
    names = getattr(message, "parameters", ()) if parameters is None else parameters
    if not names or not flags:
        return text
    for name in names:
        if name in flags:
            pattern = rf"(?<![\w./\\-])(?<!\] ){re.escape(name)}(?![\w-])(?!\.\w)"
            text = re.sub(pattern, flags[name], text)
    return text


def print_warnings(console, messages, flags: dict[str, str] | None = None, **options) -> None:
    """One "warning:" line per message, the message shown as itself (the parameters it names
    as the command's options ``flags``, see :func:`with_flags`)."""
    for message in messages:
        text = with_flags(message, flags)
        console.print(f"[yellow]warning:[/] {plain(text)}", markup=True, **options)


#: Exit codes (README): 0 ok; 1 only with --fail-on-exceed and a site above its threshold;
#: 2 bad input or an output that may not be written; 3 a bug (traceback file named).
EXIT_OK = 0
EXIT_EXCEEDS = 1
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 3

#: Most site rows, verdict-flip lines and warnings the screen summary prints; the rest are
#: counted in one line that names the file holding them all. A terminal shows a screenful;
#: common practice, no source.
SUMMARY_MAX_SITES = 25
SUMMARY_MAX_FLIPS = 10
SUMMARY_MAX_WARNINGS = 10
