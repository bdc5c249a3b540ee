"""Creating HiGHS solver objects quietly.

HiGHS prints a licence banner on standard output when the first solver object of a process is
created, before any option can switch output off; a command-line tool whose output is a report
should not carry it. :func:`quiet_highs` creates the object with file descriptor 1 pointed at the
null device for that one call, then turns solver output off.
"""

from __future__ import annotations

import os
import sys

import highspy


def quiet_highs() -> highspy.Highs:
    """A new ``highspy.Highs`` with ``output_flag`` off and no banner on standard output."""
    try:
        sys.stdout.flush()
        saved = os.dup(1)
    except (OSError, ValueError):  # no real stdout (e.g. some embedded interpreters)
        highs = highspy.Highs()
    else:
        devnull = os.open(os.devnull, os.O_WRONLY)
        try:
            os.dup2(devnull, 1)
            highs = highspy.Highs()
        finally:
            os.dup2(saved, 1)
            os.close(saved)
            os.close(devnull)
    highs.setOptionValue("output_flag", False)
    return highs
