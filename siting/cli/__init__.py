"""Command-line interface: argument parsing and reporting only.

Each command is a module of this package (screen, demo, weather, place, verify, region,
compare, rules) with a
``run(args)`` over the Python API; the parser is siting.cli.options. A :class:`~siting.errors.SitingError`
becomes one line on stderr and exit code 2; nothing is written in that case.
Exit codes: 0 ok; 1 with --fail-on-exceed when a site's verdict does not pass (verify: a
difference or a high finding); 2 bad input.
Commands: screen, demo (optionally on the hourly demo record), weather (products of an hourly
record), place, verify, region (many farms over a region), compare (runs side by side),
rules (the bundled rule sets).
"""

from __future__ import annotations

import importlib
import sys
import warnings

from siting.cli.options import build_parser, flags_by_parameter
from siting.cli.terminal import EXIT_BAD_INPUT, EXIT_INTERNAL, with_flags
from siting.errors import SitingError, SitingWarning
from siting.output.folder import InterruptedAfterWriting


def _interrupt_on_termination() -> dict:
    """SIGTERM and SIGHUP (what CI, `timeout` and service managers send) end a run like Ctrl-C:
    the staging folder is removed and an existing output folder is left as it was. Returns the
    handlers replaced, to be put back."""
    import signal

    def stop(signum, frame):
        raise KeyboardInterrupt

    previous = {}
    for name in ("SIGTERM", "SIGHUP"):
        if hasattr(signal, name):
            try:
                previous[name] = signal.signal(getattr(signal, name), stop)
            except ValueError:  # not the main thread (an embedding program): leave it be
                pass
    return previous


def _restore_signals(previous: dict) -> None:
    import signal

    for name, handler in previous.items():
        signal.signal(getattr(signal, name), handler)


def main(argv: list[str] | None = None) -> int:
    """Run one command line; returns the exit code (see the module docstring)."""
    args = build_parser().parse_args(argv)
    previous = _interrupt_on_termination()
    try:
        # the command's own module, imported only now: `siting --help` or a bad option costs
        # no import of the numerical stack (start-up time), and a command loads only its own
        command = importlib.import_module(f"siting.cli.{args.command_module}")
        with warnings.catch_warnings():
            # a run keeps its warnings on its result and the command prints them in its
            # summary (with the options they name); Python's display would repeat them
            warnings.simplefilter("ignore", SitingWarning)
            return command.run(args)
    except SitingError as exc:
        message = with_flags(exc, flags_by_parameter(args.command))
        print(f"siting: error: {message}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except InterruptedAfterWriting as exc:
        print(
            f"siting: interrupted after {exc.out_dir} was complete: it holds this run's whole "
            "result (only tidying up was cut short)",
            file=sys.stderr,
        )
        return 130
    except KeyboardInterrupt:
        print("siting: interrupted; nothing was written", file=sys.stderr)
        return 130
    except OSError as exc:  # the machine, not the input: a full disk, a read-only folder
        where = f" {exc.filename}" if getattr(exc, "filename", None) else ""
        print(
            f"siting: error: cannot read or write{where}: {exc.strerror or exc}; nothing was "
            "written",
            file=sys.stderr,
        )
        return EXIT_BAD_INPUT
    except Exception as exc:  # a bug: one line, and the traceback kept for the report
        print(
            f"siting: internal error (a bug, please report it): {type(exc).__name__}: {exc}; "
            f"the traceback is in {_write_traceback()}",
            file=sys.stderr,
        )
        return EXIT_INTERNAL
    finally:
        _restore_signals(previous)


def _write_traceback() -> str:
    """Write the current exception's traceback to a new file in the temp folder; its path."""
    import tempfile
    import traceback

    try:
        handle, path = tempfile.mkstemp(prefix="siting-traceback-", suffix=".txt")
        with open(handle, "w", encoding="utf-8") as out:
            out.write(traceback.format_exc())
        return path
    except OSError:
        return "(could not be written)"
