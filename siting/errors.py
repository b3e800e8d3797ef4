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
