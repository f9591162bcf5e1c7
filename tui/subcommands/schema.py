"""`railroom schema chain|preset|report`: print a JSON Schema for editors and scripts."""

from __future__ import annotations

from railroom.engine import SCHEMAS
from railroom.tui.subcommands.common import print_json
from railroom.tui.subcommands.exit_codes import GO


def run_schema(args) -> int:
    print_json(SCHEMAS[args.kind]())
    return GO
