"""The core's error types.

Every error a user can cause names the field it came from, as a path into the
case file (``doses[2].amount``), so the command line can print one line and the
app can mark the field.
"""

from __future__ import annotations


def one_line(text: str) -> str:
    """Text with control characters (line breaks included) escaped, so an error stays on one line."""
    return "".join(c if c.isprintable() else c.encode("unicode_escape").decode("ascii") for c in str(text))


class TdmError(Exception):
    """Base of every error the core raises on purpose."""


class InputError(TdmError, ValueError):
    """Implausible or malformed input (command-line exit status 2).

    Args:
        field: path of the offending value in the case file, e.g. ``levels[1].time``.
        message: what is wrong, in words a pharmacist can act on.
    """

    def __init__(self, field: str, message: str) -> None:
        field, message = one_line(field), one_line(message)
        super().__init__(f"{field}: {message}" if field else message)
        self.field = field
        self.message = message


class NoEstimateError(TdmError):
    """Input is valid but the requested method cannot give an estimate (exit 3).

    Args:
        method: the method asked for.
        why: why it cannot, and what would make an estimate possible.
    """

    def __init__(self, method: str, why: str) -> None:
        method, why = one_line(method), one_line(why)
        super().__init__(f"{method}: {why}")
        self.method = method
        self.why = why


class ConvergenceError(TdmError):
    """An optimiser or root finder did not converge; never returned as an answer."""
