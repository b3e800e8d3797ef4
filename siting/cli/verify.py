"""`siting verify`: a regulator's check of a submitted run, and its summary."""

from __future__ import annotations

import sys
from pathlib import Path

from siting.cli.options import flags_by_parameter
from siting.cli.terminal import plain, print_warnings
from siting.output.folder import check_output_dir
from siting.output.verify import write_verify_outputs
from siting.presentation.verify_changes import change_lines
from siting.runs.verification import verify


def run(args) -> int:

    out_dir = Path(args.out_dir)
    submission = Path(args.submission)
    read = [submission] + (list(submission.rglob("*")) if submission.is_dir() else [])
    read += [Path(p) for p in (args.results, args.reference_habitats, *args.weather_files) if p]
    if args.rules and ("/" in args.rules or "\\" in args.rules or args.rules.endswith(".toml")):
        read.append(Path(args.rules))  # a rule set file, not a bundled id
    check_output_dir(out_dir.resolve(), args.overwrite, read)
    result = verify(
        Path(args.submission),
        results=Path(args.results) if args.results else None,
        reference_habitats=Path(args.reference_habitats) if args.reference_habitats else None,
        name_field=args.name_field,
        weather_files=[Path(p) for p in args.weather_files],
        rules=args.rules,
    )
    written = write_verify_outputs(result, out_dir, overwrite=args.overwrite)
    if not args.quiet:
        _print_verify_summary(result, written)
    return result.exit_code


def _print_verify_summary(result, out_dir: Path) -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    style = "green" if result.consistent else "bold red"
    console.print(
        f"[{style}]{'Consistent' if result.consistent else 'Not consistent'}[/] "
        f"(submitted with siting {result.submitted_version or '?'}, checked with "
        f"siting {result.this_version})",
        markup=True,
    )
    changed = [r for r in result.integrity if r["status"] != "ok"]
    console.print(
        f"inputs: {len(result.integrity) - len(changed)} of {len(result.integrity)} "
        f"intact; figures differing beyond tolerance: {len(result.differences)}"
    )
    console.print(plain(result.rule_sets_text))
    _print_changes(console, result.changes.as_dict())
    if result.findings:
        table = Table(title="Findings", title_justify="left")
        for col in ("severity", "code", "subject", "message"):
            table.add_column(col, no_wrap=col != "message")
        for f in result.findings:
            colour = {"high": "red", "medium": "yellow"}.get(f.severity, "")
            table.add_row(
                f"[{colour}]{f.severity}[/]" if colour else f.severity,
                f.code,
                plain(f.subject),
                plain(f.message),
            )
        console.print(table)
    flips = result.sensitivity_summary
    flips = flips[flips["verdict_flips"]] if len(flips) else flips
    for row in flips.itertuples():
        console.print(
            f"[yellow]verdict flips[/] at {plain(row.site)}: {plain(row.flipping_variants)}",
            markup=True,
        )
    print_warnings(console, result.warnings, flags_by_parameter("verify"))
    console.print(f"Outputs in {out_dir} (verify.html, findings.json).")


#: Most lines of "what changed" printed; the rest are counted (verify.html lists them all).
_CHANGE_LINES = 10


def _print_changes(console, changes: dict) -> None:
    """What changed since the run: the first lines, and how many more verify.html lists."""
    lines = change_lines(changes)
    if not lines:
        console.print("what changed since the run: nothing (inputs, outputs and emissions)")
        return
    console.print(f"[bold]What changed since the run[/] ({len(lines)}):", markup=True)
    for line in lines[:_CHANGE_LINES]:
        console.print(f"  {plain(line)}")
    if len(lines) > _CHANGE_LINES:
        console.print(f"  ... and {len(lines) - _CHANGE_LINES} more (verify.html, findings.json)")
    for note in changes.get("notes") or ():
        console.print(f"  note: {plain(note)}")
