"""The `railroom` command. `check`, `presets` and `bench` never import Textual (start-up time).

railroom [CHAIN]                       open the terminal interface (the built-in demo without CHAIN)
railroom check CHAIN [--json] ...      go / no-go with an exit code: 0 GO, 1 NO-GO, 2 unreadable input
railroom presets [list | show ID | check FILE]
railroom plot CHAIN [-o FILE]
railroom blocks [NAME]
railroom bench [--json] [--quick]
"""

from __future__ import annotations

import argparse
import sys

from railroom.tui.subcommands.exit_codes import INPUT_ERROR, INTERRUPTED


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="railroom",
        usage="railroom [CHAIN] | railroom {check,presets,plot,blocks,bench,schema} ...",
        description="Rail-headroom and regime checker for op-amp signal chains.\n"
        "`railroom [CHAIN]` opens the terminal interface on the chain file\n"
        "(the built-in demo without one).",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="examples:\n"
        "  railroom my-chain.toml                 the interface on a chain\n"
        "  railroom check my-chain.toml --json    the JSON report; exit 0 GO, 1 NO-GO, 2 unreadable\n"
        "  railroom check NEW.toml --against OLD.toml\n"
        "  railroom plot my-chain.toml -o levels.svg\n"
        "  railroom presets list",
    )
    sub = parser.add_subparsers(dest="command")

    check = sub.add_parser("check", help="check a chain file: exit 0 GO, 1 NO-GO, 2 unreadable")
    check.add_argument("chain", nargs="+", help="chain file(s) or folder(s)")
    check.add_argument("--json", action="store_true", help="print the JSON report")
    check.add_argument("--markdown", action="store_true", help="print a Markdown review report")
    check.add_argument(
        "--method", choices=("corners", "rss", "montecarlo"), help="override the chain file's method"
    )
    check.add_argument("--samples", type=int, help="Monte Carlo draws")
    check.add_argument("--seed", type=int, help="Monte Carlo seed")
    check.add_argument("--margin", help="room needed to every limit for GO, V (e.g. 50m)")
    check.add_argument(
        "--presets",
        action="append",
        default=[],
        metavar="DIR",
        help="extra preset folder (may repeat); searched last",
    )
    check.add_argument("--no-color", action="store_true", help="plain characters only")
    check.add_argument(
        "--against",
        metavar="OLD",
        help="also check OLD (a file, or REV:PATH read with git show) and show "
        "what changed per stage; the exit status stays CHAIN's",
    )
    check.add_argument(
        "--junit", metavar="FILE", help="also write a JUnit XML report (a test case per stage and check)"
    )
    check.add_argument(
        "--plots", metavar="DIR", help="with --markdown: write the level picture into DIR and embed it"
    )
    check.add_argument(
        "--time-limit",
        type=float,
        metavar="SECONDS",
        help="many files: stop checking one after this long (default 300; 0: none)",
    )

    presets = sub.add_parser("presets", help="list, show or check part presets")
    presets.add_argument("action", nargs="?", default="list", choices=("list", "show", "check"))
    presets.add_argument("target", nargs="?", help="preset id (show) or file (check)")
    presets.add_argument("--presets", action="append", default=[], metavar="DIR")

    bench = sub.add_parser("bench", help="time the engine on the reference chain")
    bench.add_argument("--json", action="store_true")
    bench.add_argument(
        "--quick", action="store_true", help="tiny sizes and short chains: every figure, none comparable"
    )

    blocks = sub.add_parser("blocks", help="list the blocks, or show one's fields and formulas")
    blocks.add_argument("name", nargs="?", help="a block name, e.g. noninverting")
    blocks.add_argument("--json", action="store_true")

    plot = sub.add_parser("plot", help="draw the level picture of a chain (SVG or PNG)")
    plot.add_argument("chain", help="chain file")
    plot.add_argument(
        "-o", "--output", metavar="FILE", help="FILE.svg or FILE.png (default: CHAIN's name with .svg, here)"
    )
    plot.add_argument("--presets", action="append", default=[], metavar="DIR")

    schema = sub.add_parser("schema", help="print the JSON Schema of a file kind")
    schema.add_argument("kind", choices=("chain", "preset", "report"))
    return parser


class QuietPipe:
    """A text stream whose reader may go away (`railroom check --json | head -c1`): the first
    broken pipe silences the rest of the output instead of raising, so the command still ends
    with its own exit status. The file descriptor is pointed at the null device, so Python's
    flush at exit has nothing to complain about either."""

    def __init__(self, stream) -> None:
        self._stream, self.broken = stream, False

    def write(self, text: str) -> int:
        if not self.broken:
            try:
                return self._stream.write(text)
            except BrokenPipeError:
                self._silence()
        return len(text)

    def flush(self) -> None:
        if not self.broken:
            try:
                self._stream.flush()
            except BrokenPipeError:
                self._silence()

    def _silence(self) -> None:
        import os

        self.broken = True
        try:
            null = os.open(os.devnull, os.O_WRONLY)
            os.dup2(null, self._stream.fileno())
            os.close(null)
        except (OSError, ValueError, AttributeError):
            pass  # not a real file (a test's capture): the flag alone keeps it quiet

    def __getattr__(self, name: str):
        return getattr(self._stream, name)


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    if not argv or argv[0] not in ("check", "presets", "bench", "-h", "--help", "schema", "blocks", "plot"):
        return open_interface(argv)
    streams = sys.stdout, sys.stderr
    sys.stdout, sys.stderr = QuietPipe(sys.stdout), QuietPipe(sys.stderr)
    try:
        return run_command(argv)
    except KeyboardInterrupt:  # Ctrl-C: stop quietly, with the shell's status for it
        return INTERRUPTED
    finally:
        for stream in (sys.stdout, sys.stderr):
            stream.flush()
        sys.stdout, sys.stderr = streams


def run_command(argv: list[str]) -> int:
    args = build_parser().parse_args(argv)
    if args.command == "check":
        from railroom.tui.subcommands.check import run_check

        return run_check(args)
    if args.command == "presets":
        from railroom.tui.subcommands.presets import run_presets

        return run_presets(args)
    if args.command == "bench":
        from railroom.tui.subcommands.bench import run_bench

        return run_bench(args)
    if args.command == "blocks":
        from railroom.tui.subcommands.blocks import run_blocks

        return run_blocks(args)
    if args.command == "plot":
        from railroom.tui.subcommands.plot import run_plot

        return run_plot(args)
    if args.command == "schema":
        from railroom.tui.subcommands.schema import run_schema

        return run_schema(args)
    return INPUT_ERROR


def open_interface(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(prog="railroom", description="Open the terminal interface.")
    parser.add_argument("chain", nargs="?", help="chain file (the built-in demo when left out)")
    parser.add_argument("--presets", action="append", default=[], metavar="DIR")
    args = parser.parse_args(argv)
    try:
        from railroom.tui.app import run_app
    except ImportError as err:  # the interface is an optional layer over the engine
        print(f"railroom: the terminal interface cannot start: {err}", file=sys.stderr)
        return INPUT_ERROR
    return run_app(args.chain, tuple(args.presets))


if __name__ == "__main__":
    sys.exit(main())
