"""How the ``photpipe`` commands turn a failure into one line on stderr and an exit code.

A command lists the failures it expects as `Problem` entries and runs its work inside
`Failures`; the first entry whose exception class matches prints
``photpipe COMMAND: LABEL: message`` and gives the exit code. Anything not listed propagates.
"""

import sys
from typing import NamedTuple

from photpipe.config import ConfigError

__all__ = ["OK", "FAILED", "CONFIG_PROBLEM", "STORE_PROBLEM", "NO_DATA", "Problem", "CONFIG",
           "store_problem", "Failures", "say", "fail"]

#: Exit codes shared by the commands.
OK, FAILED, CONFIG_PROBLEM, STORE_PROBLEM, NO_DATA = 0, 1, 2, 3, 4


class Problem(NamedTuple):
    """An expected failure: exception class(es), the exit code, and a label for the message."""

    kinds: type | tuple
    code: int
    label: str = ""


#: A configuration that cannot be used.
CONFIG = Problem(ConfigError, CONFIG_PROBLEM, "configuration problem")


def store_problem():
    """Return the `Problem` of a damaged campaign store (imports the store only when asked).

    Examples
    --------
    >>> store_problem().code
    3
    """
    from photpipe.store import StoreError

    return Problem(StoreError, STORE_PROBLEM, "campaign store problem")


def say(command, text):
    """Print ``photpipe COMMAND: text`` on stderr."""
    print(f"photpipe {command}: {text}", file=sys.stderr)


def fail(command, text, code):
    """Print ``photpipe COMMAND: text`` on stderr and return ``code``."""
    say(command, text)
    return code


class Failures:
    """Context manager: turn the listed exceptions into a printed line and an exit code.

    After the ``with`` block, ``code`` is None when nothing failed, else the exit code of the
    first matching `Problem`.

    Parameters
    ----------
    command : str
        The sub-command's name, for the message.
    *problems : Problem
        Expected failures, matched in order.

    Examples
    --------
    >>> with Failures("demo", Problem(ValueError, 2, "bad value")) as outcome:
    ...     raise ValueError("x must be positive")
    >>> outcome.code
    2
    """

    def __init__(self, command, *problems):
        self.command = command
        self.problems = problems
        self.code = None

    def __enter__(self):
        return self

    def __exit__(self, kind, exc, traceback):
        if kind is None:
            return False
        for problem in self.problems:
            if issubclass(kind, problem.kinds):
                say(self.command, f"{problem.label}: {exc}" if problem.label else str(exc))
                self.code = problem.code
                return True
        return False
