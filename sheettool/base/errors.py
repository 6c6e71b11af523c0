"""Errors that carry a message for the technician and the exit code the command line returns."""


class SheettoolError(Exception):
    """Base class: the message is shown as one line, without a traceback."""

    exit_code = 1


class UsageError(SheettoolError):
    """The command line or a parameter is wrong (exit 2)."""

    exit_code = 2


class InputError(SheettoolError):
    """The input cannot be evaluated (exit 3)."""

    exit_code = 3


class OutputError(SheettoolError):
    """The output cannot be written (exit 4)."""

    exit_code = 4
