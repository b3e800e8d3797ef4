"""What every command shares on the terminal: exit codes, warning lines, user text shown as
itself (never as rich markup), and how many rows a summary prints.
"""

from __future__ import annotations


def plain(text) -> str:
    """User text (site names, messages) shown as itself in rich output, never as markup."""
    from rich.markup import escape

    return escape(str(text))


def print_warnings(console, messages, **options) -> None:
    """One "warning:" line per message, the message shown as itself."""
    for message in messages:
        console.print(f"[yellow]warning:[/] {plain(message)}", markup=True, **options)


EXIT_OK = 0


EXIT_EXCEEDS = 1  # --fail-on-exceed and a site above its threshold


EXIT_BAD_INPUT = 2


EXIT_INTERNAL = 3


#: Most site rows, verdict-flip lines and warnings the screen summary prints; the rest are
#: counted in one line that names the file holding them all. A terminal shows a screenful;
#: common practice, no source.
SUMMARY_MAX_SITES = 25


SUMMARY_MAX_FLIPS = 10


SUMMARY_MAX_WARNINGS = 10
