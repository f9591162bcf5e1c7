"""What several subcommands share: one chain checked with every failure as located lines
(CheckRefused), those lines on stderr, the limiting margin in words, and JSON on stdout."""

from __future__ import annotations

import json
import sys
import warnings

from railroom.engine import ChainResult, StageResult, ValueTextError, margin_words, parse_value, visible


class CheckRefused(Exception):
    """The check cannot give a verdict; `lines` say why, each ready for stderr."""

    def __init__(self, lines: list[str]) -> None:
        self.lines = lines
        super().__init__("\n".join(lines))


def command_line_numbers(args) -> float | None:
    """--margin, --samples and --seed within the ranges a chain file allows (the README's File formats)."""
    problems = []
    for option, value, low, high in (
        ("--samples", args.samples, 1, 10_000_000),
        ("--seed", args.seed, 0, 2**32 - 1),
    ):
        if value is not None and not low <= value <= high:
            problems.append(f"{option}: expected a whole number from {low} to {high}, got {value}")
    limit = getattr(args, "time_limit", None)
    if limit is not None and not limit >= 0:
        problems.append(f"--time-limit: expected 0 s (no limit) or more, got {limit:g}")
    margin = None
    if args.margin is not None:
        try:
            margin = parse_value(args.margin, "voltage")
            if margin < 0:
                problems.append(f"--margin: expected 0 V or more, got {args.margin}")
        except ValueTextError as err:
            problems.append(f"--margin: {err}")
    if problems:
        raise CheckRefused(problems)
    return margin


def check_file(path: str, args, margin: float | None) -> ChainResult:
    """Load and analyse one chain; every way it can fail becomes CheckRefused, never a traceback."""
    from railroom.engine import InputError, analyse, load_checked

    try:
        with warnings.catch_warnings():
            # Overflow inside the arithmetic is judged by the checks; a warning line helps no one.
            warnings.simplefilter("ignore", RuntimeWarning)
            chain, library = load_checked(path, tuple(args.presets), strict=True)
            return analyse(
                chain, library.parts, method=args.method, samples=args.samples, seed=args.seed, margin=margin
            )
    except InputError as err:
        raise CheckRefused([str(p) for p in err.problems]) from None
    except NotImplementedError as err:
        raise CheckRefused([f"{path}: {err}"]) from None
    except Exception as err:  # noqa: BLE001 - the guard: an engine failure is one clear message
        raise CheckRefused(
            [
                f"{path}: the check could not finish ({type(err).__name__}: {err}); "
                "this is a railroom bug, please report it with the chain file"
            ]
        ) from None


MAX_PROBLEM_LINES = 200


def capped(lines: list[str], limit: int = MAX_PROBLEM_LINES) -> list[str]:
    """The first `limit` lines, then one that counts the rest."""
    if len(lines) <= limit:
        return list(lines)
    return [*lines[:limit], f"and {len(lines) - limit:,} more problems (fix these first)"]


def report_refusal(err: CheckRefused) -> None:
    for line in capped(err.lines):
        print(f"railroom: {visible(line, 2000)}", file=sys.stderr)


def margin_text(result: StageResult) -> str:
    check = result.limiting
    if check is None:
        return "-"
    value = result.margins[check]
    return margin_words(check, value)


def json_text(data: dict) -> str:
    """Indented JSON for stdout; characters that would act on a terminal are \\u escapes."""
    from railroom.engine import terminal_json

    return terminal_json(json.dumps(data, indent=2, ensure_ascii=False)) + "\n"


def print_json(data: dict) -> None:
    sys.stdout.write(json_text(data))
