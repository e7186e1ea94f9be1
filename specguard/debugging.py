"""``--debug``: a bug shows its traceback instead of becoming a finding.

Without ``--debug`` an exception inside the analysis of one file becomes an
``internal-error`` finding (exit 3) and the run goes on; an exception inside a trial
the analysis can do without (a fix variant, an explore option, the comparison with
the catalogue inductance) means that trial gives nothing. With ``--debug`` the first
kind propagates to a traceback and the second prints its traceback on stderr before
the analysis goes on, so a fix that is missing because of a bug can be told from a
fix that does not exist. The flag is set per analysed file (also inside worker
processes) with :func:`enabled`.
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Iterator
from contextvars import ContextVar

ACTIVE: ContextVar[bool] = ContextVar("specguard_debug", default=False)


@contextlib.contextmanager
def enabled(on: bool) -> Iterator[None]:
    token = ACTIVE.set(bool(on))
    try:
        yield
    finally:
        ACTIVE.reset(token)


def reraise_when_debugging() -> None:
    """Call inside an ``except`` block that turns the exception into a finding: under
    ``--debug`` the exception goes on to its traceback instead."""
    if ACTIVE.get():
        raise


def went_on_without(what: str) -> None:
    """Call inside an ``except`` block that goes on without ``what``: under
    ``--debug`` the exception's traceback goes to stderr, else nothing."""
    if ACTIVE.get():
        import traceback  # only here: a run that reads nothing else stays lean (tests/test_corpus.py)

        sys.stderr.write(f"specguard --debug: {what} failed; the analysis went on without it:\n")
        sys.stderr.write(traceback.format_exc())
