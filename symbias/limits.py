"""Every limit symbias enforces, in one place: its name, its value and what to do instead.

Lowest level beside :mod:`symbias.expressions` (it imports only
:mod:`symbias.errors` and the expression limits it re-exports).  Each growth
the tool can meet (netlist size, expression size, exact-result size, sweep
points, temperature, memory) has a named limit checked before the work
starts wherever the size can be known or estimated; each ends in a one-line
:class:`~symbias.errors.LimitError` (or, for a value outside the physical
range, a :class:`~symbias.errors.UsageError`) that names the limit, the value
met and what to do instead.  ``docs/limits.md`` lists them for users.

The limits are far beyond any bias circuit a designer analyses by hand; they
exist so that no input, however built, hangs the tool, crashes it or makes it
take more than :data:`MEMORY_LIMIT` of memory.

Examples
--------
>>> temperature_problem(27.0) is None, temperature_problem(-300.0)[:30]
(True, 'temperature -300 degC is out o')
>>> check_points(201)
201
"""

from __future__ import annotations

import math
import os
from contextlib import contextmanager
from typing import Iterator

from .errors import LimitError
from .expressions.limits import (MAX_BITS, MAX_DECIMAL_EXPONENT, MAX_DEPTH, MAX_DIGITS, MAX_EXPONENT, MAX_LENGTH,
                                 MAX_NESTING, MAX_NODES, MAX_TERMS)

__all__ = [
    "ABSOLUTE_ZERO", "MAX_TEMPERATURE", "temperature_problem",
    "MAX_SWEEP_POINTS", "check_points",
    "MAX_ELEMENTS", "MAX_INCLUDE_DEPTH", "MAX_SUBCIRCUIT_DEPTH", "MAX_FILE_BYTES",
    "MAX_UNKNOWNS", "MAX_SYMBOLS", "MAX_TERM_ESTIMATE", "MAX_MINOR_STATES", "MAX_RESULT_BITS",
    "MAX_DERIVED_TERMS", "MAX_PRINTED_TERMS", "MAX_TYPESET_TERMS", "check_terms",
    "MEMORY_LIMIT", "MEMORY_VARIABLE", "memory_limit", "memory_guard", "out_of_memory",
    "MAX_EXPONENT", "MAX_DECIMAL_EXPONENT", "MAX_DIGITS", "MAX_BITS", "MAX_NODES", "MAX_NESTING", "MAX_DEPTH",
    "MAX_LENGTH", "MAX_TERMS",
]

# -- physical range ------------------------------------------------------------------------
#: Absolute zero in degC: every temperature must lie above it.
ABSOLUTE_ZERO = -273.15
#: Highest temperature (degC) the device models are asked to work at.
MAX_TEMPERATURE = 1000.0

# -- sizes of the input ----------------------------------------------------------------------
#: Most elements a netlist may hold once its subcircuits are flattened.
MAX_ELEMENTS = 5_000
#: Deepest nesting of ``.include``/``.lib`` files.
MAX_INCLUDE_DEPTH = 20
#: Deepest nesting of subcircuit instances.
MAX_SUBCIRCUIT_DEPTH = 20
#: Largest input file (netlist, included file, process or library file), in bytes.
MAX_FILE_BYTES = 10_000_000

# -- sizes of the work ---------------------------------------------------------------------
#: Most points of one DC sweep.
MAX_SWEEP_POINTS = 10_000
#: Most unknowns (node voltages and branch currents) of an exact small-signal solve.
MAX_UNKNOWNS = 400
#: Most distinct symbols (ring generators) of an exact small-signal solve.
MAX_SYMBOLS = 600
#: Largest estimated term count of an exact result (an upper bound counted before the expansion).
MAX_TERM_ESTIMATE = 50_000_000
#: Most minors the exact expansion may visit.
MAX_MINOR_STATES = 40_000
#: Largest coefficient of an exact result, in bits of numerator and denominator together (about 3,600 digits).
MAX_RESULT_BITS = 12_000
#: Largest exact result (numerator plus denominator terms) that --approx, --sensitivity and --mirror-error work on.
MAX_DERIVED_TERMS = 20_000
#: Largest exact result written out in full (JSON, Markdown; the text form summarises larger ones).
MAX_PRINTED_TERMS = 1_500_000
#: Largest exact result typeset through the computer-algebra system (LaTeX, Python code).
MAX_TYPESET_TERMS = 10_000

# -- memory --------------------------------------------------------------------------------
#: Memory a command may take beyond what its libraries reserve at start-up, in bytes (1.75 GiB).
MEMORY_LIMIT = 1792 * 2**20
#: Environment variable that changes :data:`MEMORY_LIMIT` (``4G``, ``900M``, ``off``).
MEMORY_VARIABLE = "SYMBIAS_MEMORY_LIMIT"


def temperature_problem(value: float) -> str | None:
    """Why ``value`` (degC) is no usable temperature, or None when it is one.

    Examples
    --------
    >>> temperature_problem(float("nan"))
    'temperature nan degC is out of the range the device models accept: give a finite value above -273.15 degC (absolute zero) and at most 1000 degC'
    """
    if isinstance(value, (int, float)) and math.isfinite(value) and ABSOLUTE_ZERO < value <= MAX_TEMPERATURE:
        return None
    return (f"temperature {value:g} degC is out of the range the device models accept: give a finite value above "
            f"{ABSOLUTE_ZERO:g} degC (absolute zero) and at most {MAX_TEMPERATURE:g} degC")


def check_points(points: int, where: str = "--points") -> int:
    """``points`` when a sweep may have that many, else a :class:`LimitError`.

    Examples
    --------
    >>> check_points(10**20)
    Traceback (most recent call last):
    ...
    symbias.errors.LimitError: --points: a sweep of 100000000000000000000 points is more than MAX_SWEEP_POINTS = 10000; sweep a narrower range, or split it into several sweeps
    """
    if points > MAX_SWEEP_POINTS:
        raise LimitError(f"a sweep of {points} points is more than MAX_SWEEP_POINTS = {MAX_SWEEP_POINTS}; "
                         "sweep a narrower range, or split it into several sweeps", path=where)
    return points


def check_terms(terms: int, limit: int, name: str, what: str, instead: str, path: str | None = None) -> None:
    """A :class:`LimitError` when a result of ``terms`` terms is beyond ``limit`` for ``what``.

    Examples
    --------
    >>> check_terms(10, MAX_DERIVED_TERMS, "MAX_DERIVED_TERMS", "--approx", "use fewer symbols")
    """
    if terms > limit:
        raise LimitError(f"the exact result has {terms} terms, more than {name} = {limit} for {what}; {instead}",
                         path=path)


#: The smallest memory limit accepted: the interpreter and the libraries' import need about this much.
MIN_MEMORY_LIMIT = 24 * 2**20


def memory_limit(environ: dict | None = None) -> int | None:
    """The memory limit in bytes from :data:`MEMORY_VARIABLE` (None when ``off``), else :data:`MEMORY_LIMIT`.

    Raises
    ------
    LimitError
        For a value that is no size, or below :data:`MIN_MEMORY_LIMIT`.

    Examples
    --------
    >>> memory_limit({"SYMBIAS_MEMORY_LIMIT": "4G"}) == 4 * 2**30, memory_limit({"SYMBIAS_MEMORY_LIMIT": "off"})
    (True, None)
    """
    text = (os.environ if environ is None else environ).get(MEMORY_VARIABLE, "").strip().lower()
    if not text:
        return MEMORY_LIMIT
    if text in ("off", "none", "0", "unlimited"):
        return None
    number = text.removesuffix("b").removesuffix("i")
    scale = {"k": 2**10, "m": 2**20, "g": 2**30, "t": 2**40}.get(number[-1:], 1)
    number = number[:-1] if scale != 1 else number
    try:
        size = int(float(number) * scale)
    except ValueError:
        size = 0
    if size <= 0:
        raise LimitError(f"{text!r} is no size: write e.g. 4G, 900M or off", path=MEMORY_VARIABLE)
    if size < MIN_MEMORY_LIMIT:
        # below this even Python's own compiler fails mid-import, with misleading errors
        raise LimitError(f"{text!r} is less than the {MIN_MEMORY_LIMIT // 2**20}M the program itself needs: "
                         "write e.g. 4G, 900M or off", path=MEMORY_VARIABLE)
    return size


def _reserved_bytes() -> int:
    """Address space mapped but not resident (libraries, thread stacks, BLAS buffers), from /proc."""
    sizes = {}
    with open("/proc/self/status") as status:
        for line in status:
            key, _, rest = line.partition(":")
            if key in ("VmSize", "VmRSS"):
                sizes[key] = int(rest.split()[0]) * 1024
    return max(0, sizes.get("VmSize", 0) - sizes.get("VmRSS", 0))


@contextmanager
def memory_guard(limit: int | None) -> Iterator[None]:
    """Bound the process's address space to ``limit`` bytes beyond its present reservations, then restore it.

    The address space (``RLIMIT_AS``) bounds resident memory from above, so
    with the libraries' untouched reservations (numpy's BLAS buffers, thread
    stacks, shared libraries) added back, resident memory stays near
    ``limit``.  An allocation beyond it raises :class:`MemoryError` in
    Python code, which the command line reports with :func:`out_of_memory`.
    Does nothing where the platform has no such limit or ``limit`` is None.

    Examples
    --------
    >>> with memory_guard(None):
    ...     pass
    """
    try:
        import resource
    except ImportError:  # pragma: no cover - not a POSIX system
        yield
        return
    if limit is None or not os.path.exists("/proc/self/status"):
        yield
        return
    soft, hard = resource.getrlimit(resource.RLIMIT_AS)
    wanted = limit + _reserved_bytes()
    if hard != resource.RLIM_INFINITY:
        wanted = min(wanted, hard)
    if soft != resource.RLIM_INFINITY and soft < wanted:  # a tighter limit set by the user stays
        yield
        return
    resource.setrlimit(resource.RLIMIT_AS, (wanted, hard))
    try:
        yield
    finally:
        resource.setrlimit(resource.RLIMIT_AS, (soft, hard))


def out_of_memory(limit: int | None, what: str = "the work needs more memory than it may take") -> LimitError:
    """The one-line error for a command that ran out of memory (``what`` says how it showed).

    Examples
    --------
    >>> str(out_of_memory(MEMORY_LIMIT))[:60]
    '<input>: the work needs more memory than it may take (memory'
    """
    shown = f"{limit / 2**30:.3g} GiB" if limit else "the machine's memory"
    return LimitError(f"{what} (memory limit {shown}); use fewer symbols (no --symbolic, a "
                      "lower --level), numbers for free symbols, --approx on a smaller circuit, or set "
                      f"{MEMORY_VARIABLE} higher on a bigger machine")
