"""The command line's exit codes, in one place (the README: 0 GO, 1 NO-GO, 2 unreadable input).

Many chains at once exit with the worst of their codes (INPUT_ERROR > NO_GO > GO); a command ended
by a signal exits as the shell reports a process killed by it (128 + the signal's number).
"""

from __future__ import annotations

GO = 0  # every stage stays linear with the margin asked for (or the command did its job)
NO_GO = 1  # a stage leaves its linear regime, or lacks the margin
INPUT_ERROR = 2  # unreadable input: a file, a field or an option with a problem

SIGINT = 2  # the signal Ctrl-C sends (POSIX)


def stopped_by(signum: int) -> int:
    """The shell's status for a process ended by signal `signum` (128 + its number)."""
    return 128 + signum


INTERRUPTED = stopped_by(SIGINT)  # Ctrl-C: 130
