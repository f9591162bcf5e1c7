"""The command line's subcommands, one module per command (`railroom check` is check.py, ...).

tui/cli.py parses the arguments and hands them to the command's `run_*`; the exit codes are in
exit_codes.py, what several commands share (the one-chain check, refusals, JSON output) in
common.py. None of them imports Textual, and none imports tui/cli.py back.
"""
