"""Exception tree of symbias.

Every error a user can cause derives from :class:`SymbiasError`.  Errors that
come from a file carry its ``path`` and ``line`` so the command line can print
them as a single ``file:line: cause`` message.

Examples
--------
>>> err = NetlistError("unknown element letter 'Z'", path="amp.cir", line=4)
>>> str(err)
"amp.cir:4: unknown element letter 'Z'"
"""

from __future__ import annotations

__all__ = [
    "SymbiasError",
    "NetlistError",
    "CircuitError",
    "AnalysisError",
    "ConvergenceError",
    "ProcessError",
    "SpecError",
    "LibraryError",
]


class SymbiasError(Exception):
    """Root of all symbias errors; carries an optional file and line.

    Parameters
    ----------
    reason : str
        What is wrong, one line, no trailing period needed.
    path : str, optional
        The file the problem was found in.
    line : int, optional
        1-based line number in ``path``.
    """

    def __init__(self, reason: str, path: str | None = None, line: int | None = None):
        super().__init__(reason)
        self.reason = reason
        self.path = path
        self.line = line

    def located(self, path: str | None = None, line: int | None = None) -> "SymbiasError":
        """Return a copy of this error with a file and line filled in where missing."""
        return type(self)(self.reason, self.path or path, self.line or line)

    def __str__(self) -> str:
        where = self.path or "<input>"
        if self.line:
            where = f"{where}:{self.line}"
        return f"{where}: {self.reason}"


class NetlistError(SymbiasError, ValueError):
    """The netlist text cannot be read (syntax, values, unknown cards)."""


class CircuitError(SymbiasError, ValueError):
    """The netlist reads but does not describe a valid circuit."""


class AnalysisError(SymbiasError, ArithmeticError):
    """An analysis cannot be carried out (for example a singular network)."""


class ConvergenceError(AnalysisError):
    """A nonlinear DC solve did not converge."""


class ProcessError(SymbiasError, ValueError):
    """A process (device parameter) file is malformed or incomplete."""


class SpecError(SymbiasError, ValueError):
    """A block specification is malformed or cannot be met."""


class LibraryError(SymbiasError, ValueError):
    """A topology library file is malformed."""
