"""The verdict words: one set for the terminal, JSON, HTML and the exit status.

A check against limits ends ``within_limits`` (exit status 0) or ``outside_limits`` (exit status 1); a
site entry that could not be checked at all (a bad file, say) is an ``error`` (the site then exits 1 too).
Bad input to a command as a whole is exit status 2 and an ``error:`` line, with no verdict.
"""
from __future__ import annotations

WITHIN = "within_limits"
OUTSIDE = "outside_limits"
ERROR = "error"

TEXT = {WITHIN: "within limits", OUTSIDE: "outside limits", ERROR: "error"}
"""How each verdict is written for people (terminal and HTML): the JSON word with a space."""

EXIT_STATUS = {WITHIN: 0, OUTSIDE: 1, ERROR: 1}


def verdict_of(ok: bool) -> str:
    """``within_limits`` when ``ok``, else ``outside_limits``."""
    return WITHIN if ok else OUTSIDE
