"""Signals received during one run of the command, shared by the CLI and the writers.

The CLI's handlers turn SIGINT and SIGTERM into :class:`Interrupted` and record the
status in :data:`RECEIVED`. Where Python cannot raise (a ``__del__``, a fork hook,
a callback from compiled code) the exception is swallowed, so every writer calls
:func:`stop_if_signalled` first: nothing is written after a signal. Standard
library only, nothing imported: the atomic writer and the CLI load it at start.
"""

from __future__ import annotations

# Exit status after a signal, as shells report it: 128 + the signal number
# (docs/reliability.md §2 (the error contract): 130 on SIGINT, 143 on SIGTERM).
EXIT_SIGINT, EXIT_SIGTERM = 130, 143

RECEIVED: list[int] = []


class Interrupted(KeyboardInterrupt):
    """SIGINT or SIGTERM in the main process. A KeyboardInterrupt, so it unwinds
    through every ``finally`` and temp-file cleanup that lets KeyboardInterrupt
    pass (it is no ``Exception``); the CLI then returns ``status``."""

    def __init__(self, status: int) -> None:
        super().__init__(status)
        self.status = status


def stop_if_signalled() -> None:
    """Raise :class:`Interrupted` when a signal came during this run."""
    if RECEIVED:
        raise Interrupted(max(RECEIVED))
