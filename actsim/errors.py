"""Exceptions and warnings raised by actsim.

Every error that reaches a user names the field, the value, the unit and the
allowed range in one line; the command line turns :class:`ActsimInputError`
into that line and exit status 2.
"""

from __future__ import annotations


class ActsimError(Exception):
    """Base class of all actsim errors.

    The message is one line: a line break that came with a user's text (a name, a choice) is shown as
    ``\\n`` rather than splitting the message.
    """

    def __init__(self, message="", *args):
        if isinstance(message, str) and ("\n" in message or "\r" in message):
            message = message.replace("\r\n", "\\n").replace("\n", "\\n").replace("\r", "\\r")
        super().__init__(message, *args)


class ActsimInputError(ActsimError, ValueError):
    """Bad user input: a scenario field, a data file or a command-line option."""


class ActsimSimulationError(ActsimError, RuntimeError):
    """The simulation could not produce finite results (never written to disk)."""


class ActsimOutputError(ActsimError, OSError):
    """A result file could not be written (a full disk, a failing file library); nothing partial is kept."""


class ActsimWarning(UserWarning):
    """A result is usable but the user should know something about it."""
