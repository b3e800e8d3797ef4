"""The text-cell convention of siting's CSV tables, both ways.

A text cell that a spreadsheet would evaluate (it begins with = + - @, a tab or a carriage
return and is not a number) is written with a leading apostrophe (:func:`spreadsheet_safe`,
used by siting.output.tables) and read back without it (:func:`spreadsheet_text`, used when
``siting verify`` reads a submission).
"""

from __future__ import annotations

#: A text cell starting with one of these is taken for a formula by spreadsheet programs.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def spreadsheet_safe(value):
    """A text cell that a spreadsheet would evaluate, made literal with a leading apostrophe.

    Parameters
    ----------
    value : object
        A cell's value.

    Returns
    -------
    object
        ``"'" + value`` for text starting with = + - @ (not a number), else the value itself.
    """
    if isinstance(value, str) and value.startswith(FORMULA_STARTS) and not _is_number(value):
        return "'" + value
    return value


def spreadsheet_text(value):
    """The inverse of :func:`spreadsheet_safe`, for reading our own CSV tables back.

    Parameters
    ----------
    value : object
        A cell's value as read.

    Returns
    -------
    object
        The text without the apostrophe :func:`spreadsheet_safe` added, else the value itself.
    """
    if (
        isinstance(value, str)
        and value.startswith("'")
        and value[1:].startswith(FORMULA_STARTS)
        and not _is_number(value[1:])
    ):
        return value[1:]
    return value
