"""`railroom schema chain|preset|report`: print a JSON Schema for editors and scripts."""

from __future__ import annotations

from railroom.engine.formats.schema import SCHEMAS
from railroom.tui.cli import EXIT_GO, print_json


def run_schema(args) -> int:
    print_json(SCHEMAS[args.kind]())
    return EXIT_GO
