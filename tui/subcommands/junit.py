"""`railroom check ... --junit FILE`: the JUnit XML report next to the usual output.

The file is written atomically, also when a chain cannot be checked (its suite then holds one
error), so a CI server always finds a report. The exit status is the check's own.
"""

from __future__ import annotations

import sys

from railroom.engine import SuiteInput, chain_report, junit_xml, visible, write_atomic
from railroom.tui.subcommands.exit_codes import GO, INPUT_ERROR


def write_junit(path: str, entries: list[SuiteInput]) -> bool:
    """Write the report; False (and a message on stderr) when the file cannot be written."""
    from pathlib import Path

    from railroom.engine import usual_mode

    existed = Path(path).exists()
    try:
        write_atomic(path, junit_xml(entries))
        if not existed:
            usual_mode(Path(path))
    except OSError as err:
        reason = err.strerror or str(err)
        print(f"railroom: --junit {visible(path, 500)}: cannot be written: {reason}", file=sys.stderr)
        return False
    return True


def result_entry(path: str, result, seconds: float) -> SuiteInput:
    return SuiteInput(path, chain_report(result), required=result.chain.conditions.margin, time=seconds)


def refused_entry(path: str, lines: list[str]) -> SuiteInput:
    return SuiteInput(path, None, problems=tuple(lines))


def required_margin(path: str, margin: float | None) -> float | None:
    """The margin a batch worker checked with: the command line's, else the file's."""
    if margin is not None:
        return margin
    from railroom.engine import load_chain

    try:
        return load_chain(path).conditions.margin
    except Exception:  # noqa: BLE001 - an unreadable file has an error suite, no margin
        return None


def run_batch_junit(args, margin: float | None) -> int:
    """run_batch with the JSON reports kept for the JUnit file (summary or --json output);
    the suites' time is 0 (the files are checked in parallel)."""
    from railroom.tui.subcommands.batch import Options, chain_paths, check_all, print_outcomes

    if getattr(args, "markdown", False):
        print(
            "railroom: --junit with several chains takes the summary or --json output, not --markdown",
            file=sys.stderr,
        )
        return INPUT_ERROR
    paths, missing = chain_paths(args.chain)
    options = Options(tuple(args.presets), args.method, args.samples, args.seed, margin, "json")
    outcomes = check_all(paths, options) if paths else []
    for line in missing:
        print(f"railroom: {visible(line, 2000)}", file=sys.stderr)
    print_outcomes(outcomes, "json" if args.json else "summary")
    entries = [
        SuiteInput(o.path, o.report, o.problems, required_margin(o.path, margin))
        if o.report is not None
        else refused_entry(o.path, list(o.problems))
        for o in outcomes
    ]
    entries += [refused_entry(line.split(":")[0], [line]) for line in missing]
    written = write_junit(args.junit, entries)
    worst = max([o.status for o in outcomes] + [INPUT_ERROR if missing else GO])
    return worst if written else max(worst, INPUT_ERROR)
