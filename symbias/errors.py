"""Exception and warning classes of symbias: every one of them, in one place.

Lowest level of the package; it imports nothing from symbias.  Every error a
user can cause derives from :class:`SymbiasError`.  Errors that come from a
file carry its ``path`` and ``line`` so the command line can print them as a
single ``file:line: cause`` message.  Each class also derives from the
builtin exception that fits (``ValueError`` for bad input, ``ArithmeticError``
for an analysis that cannot be carried out), so generic callers can catch
those; symbias itself never lets a bare builtin exception cross a module
boundary.

Examples
--------
>>> err = NetlistError("unknown element letter 'Z'", path="amp.cir", line=4)
>>> str(err)
"amp.cir:4: unknown element letter 'Z'"
>>> issubclass(LimitError, SymbiasError) and issubclass(AssumptionError, ValueError)
True
"""

from __future__ import annotations

__all__ = [
    "SymbiasError",
    "NetlistError",
    "CircuitError",
    "AnalysisError",
    "ConvergenceError",
    "InfiniteResultError",
    "ProcessError",
    "SpecError",
    "LibraryError",
    "AssumptionError",
    "LimitError",
    "SimulatorError",
    "UsageError",
    "OutputError",
    "SymbiasWarning",
    "CircuitWarning",
    "ModelWarning",
    "BiasWarning",
    "SimulatorWarning",
]


class SymbiasError(Exception):
    """Root of all symbias errors; carries an optional file and line.

    Parameters
    ----------
    reason : str
        What is wrong, one line, no trailing period needed.
    path : str, optional
        The file (or option, e.g. ``--temp``) the problem was found in.
    line : int, optional
        1-based line number in ``path``.
    """

    def __init__(self, reason: str, path: str | None = None, line: int | None = None):
        super().__init__(reason)
        self.reason = reason
        self.path = path
        self.line = line

    def located(self, path: str | None = None, line: int | None = None) -> "SymbiasError":
        """Return a copy of this error with a file and line filled in where missing.

        Examples
        --------
        >>> str(CircuitError("no ground").located("a.cir", 3))
        'a.cir:3: no ground'
        """
        return type(self)(self.reason, self.path or path, self.line or line)

    def __reduce__(self):
        return (type(self), (self.reason, self.path, self.line))

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


class InfiniteResultError(AnalysisError):
    """A quantity is infinite (an open port: an infinite output resistance); the reason says where."""


class ConvergenceError(AnalysisError):
    """A nonlinear DC solve did not converge."""


class ProcessError(SymbiasError, ValueError):
    """A process (device parameter) file is malformed or incomplete."""


class SpecError(SymbiasError, ValueError):
    """A block specification is malformed or cannot be met."""


class LibraryError(SymbiasError, ValueError):
    """A topology library file is malformed."""


class AssumptionError(SymbiasError, ValueError):
    """A magnitude assumption cannot be read or the set admits no point."""


class LimitError(SymbiasError, ValueError):
    """A documented size limit would be exceeded (terms, points, nesting, magnitude, memory).

    The reason names the limit, the value met and what to do instead.
    """


class SimulatorError(AnalysisError):
    """The external simulator is missing, failed, or reported an error in its output."""


class UsageError(SymbiasError, ValueError):
    """A command-line option or argument of the right form but the wrong value."""


class OutputError(SymbiasError, OSError):
    """A result could not be written (missing folder, full disk, no permission)."""


class SymbiasWarning(UserWarning):
    """Root of symbias's warnings; the message carries its own ``file:line:`` prefix."""


class CircuitWarning(SymbiasWarning):
    """A circuit is usable but probably not what was meant (e.g. a dangling node)."""


class ModelWarning(SymbiasWarning):
    """A model card holds parameters or a level that the built-in models do not use."""


class BiasWarning(SymbiasWarning):
    """An operating point is usable but deserves attention (several states, matched devices that differ)."""


class SimulatorWarning(SymbiasWarning):
    """The external simulator ran but said something worth knowing (a model parameter it ignored)."""
