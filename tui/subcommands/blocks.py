"""`railroom blocks [NAME]`: the block catalogue, printed from the engine's own block table."""

from __future__ import annotations

import sys

from railroom.engine import block_names, describe_block as describe
from railroom.tui.subcommands.common import print_json
from railroom.tui.subcommands.exit_codes import GO, INPUT_ERROR


def run_blocks(args) -> int:
    if args.name is None:
        rows = block_names()
        if args.json:
            print_json({"blocks": [{"name": n, "summary": s} for n, s in rows]})
            return GO
        width = max(len(n) for n, _ in rows)
        for name, summary in rows:
            print(f"{name:<{width}}  {summary}")
        print("\n`railroom blocks NAME` shows a block's fields, what each connects and its formulas.")
        return GO
    info = describe(args.name)
    if info is None:
        known = ", ".join(n for n, _ in block_names())
        print(f"railroom: unknown block {args.name!r}; the blocks are: {known}", file=sys.stderr)
        return INPUT_ERROR
    if args.json:
        print_json(info)
        return GO
    print(f"{info['name']}: {info['summary']}")
    traits = ["needs a part preset" if info["uses_part"] else "passive (no part)"]
    if info["saturates"]:
        traits.append("saturated by design")
    if info["differential_input"]:
        traits.append("takes a differential input")
    print("  " + "; ".join(traits))
    if info["fields"]:
        print("\nfields (value, then what it connects):")
        width = max(len(f["key"]) for f in info["fields"])
        for f in info["fields"]:
            unit = f" [{f['unit']}]" if f["unit"] else ""
            print(f"  {f['key']:<{width}}  {f['default']}{unit}: {f['connects']}")
        if any(f.get("takes_net") for f in info["fields"]):
            print('  (a field in V also takes { net = "NAME" }: a [nets.NAME] voltage shared by stages)')
    print("\nfields every stage of this block accepts:")
    width = max(len(f["key"]) for f in info["common_fields"])
    for f in info["common_fields"]:
        print(f"  {f['key']:<{width}}  {f['help']}")
    if info["ideal"]:
        print("\nideal op amp (railroom itself uses the part's finite gain, bandwidth and errors):")
        for line in info["ideal"]:
            print(f"  {line}")
    return GO
