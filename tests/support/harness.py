"""Run a command-line case in a child process and judge what it did: the classifier of the adversarial run.

A :class:`Case` is a ``symbias`` command line with the files it needs.  The
runner writes the files into a fresh folder, forks a child from a process
that has already imported symbias (so a case costs a fork, not an
interpreter start), runs :func:`symbias.cli.main` there exactly as the
console script does (memory guard on, stdout and stderr on files, or stdout
on ``/dev/full``), and watches it from outside: a child that has not
answered within the time limit is killed (a *hang*), one ended by a signal is
a *crash*, and its peak resident memory comes from ``wait4`` of that child
alone.

Every finished case falls in one class; the first two are fine, the others
are findings:

``success``        exit 0 with output where output is due
``error``          exit 1 or 2 and exactly one stderr line ``place[:line]: cause``
                   (one-line warnings aside), ``place`` a file of the case, an
                   option, the program (argparse usage) or the memory variable
``traceback``      a traceback on stderr, or an exit status other than 0, 1, 2
``untidy error``   exit 1 or 2 but not exactly one well-formed error line
``hang``           no answer within the limit (20 s by default)
``crash``          ended by a signal
``wrong success``  exit 0 on a case built invalid on purpose, or output that
                   fails its oracle (JSON that does not parse, generated
                   Python with code beyond a numpy formula, an empty deck)
``file damage``    a file of the case changed or removed, or a new file left
                   (a temporary, a half-written output), except the outputs
                   a successful command was asked to write
``memory``         peak resident memory at or above :data:`MEMORY_CEILING`

Examples
--------
>>> case = Case(0, "example", ("list", "--json"))
>>> run_case(case).kind
'success'
"""

from __future__ import annotations

import ast
import json
import os
import re
import shutil
import signal
import sys
import tempfile
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterable, Mapping

__all__ = ["Case", "Outcome", "run_case", "run_cases", "judge", "python_problem", "BAD_KINDS", "MEMORY_CEILING",
           "prewarm"]

#: Classes of outcome that are findings.
BAD_KINDS = ("traceback", "untidy error", "hang", "crash", "wrong success", "file damage", "memory")
#: Peak resident memory that no case may reach (2 GiB).
MEMORY_CEILING = 2 * 2**30

_WARNING = re.compile(r"^\S.*: warning: .+$")
_ERROR = re.compile(r"^(?P<where>[^\s:][^:]*?)(?::(?P<line>\d+))?: (?P<cause>\S.*)$")


@dataclass(frozen=True)
class Case:
    """One adversarial command line.

    Parameters
    ----------
    index : int
    family : str
        Which part of the generator made it (for the report).
    argv : tuple of str
        Arguments after ``symbias``; file names are relative to the case folder.
    files : mapping of str to bytes or str
        Written into the case folder before the run (sub-folders made as needed).
    invalid : str
        Why the case is invalid on purpose ("" when it may be valid): exit 0 is then a wrong success.
    outputs : tuple of str
        Files a successful run may create or replace.
    stdout : str
        ``"pipe"`` or ``"full"`` (``/dev/full``: every write fails with ENOSPC).
    env : mapping of str to str
        Environment variables set for the run (``SYMBIAS_LIBRARY``, ``SYMBIAS_MEMORY_LIMIT``).
    """

    index: int
    family: str
    argv: tuple[str, ...]
    files: Mapping[str, bytes | str] = field(default_factory=dict)
    invalid: str = ""
    outputs: tuple[str, ...] = ()
    stdout: str = "pipe"
    env: Mapping[str, str] = field(default_factory=dict)


@dataclass(frozen=True)
class Outcome:
    """What a case did and its class (see the module docstring)."""

    case: Case
    kind: str
    status: int | None
    seconds: float
    peak_kib: int
    message: str = ""
    detail: str = ""

    @property
    def bad(self) -> bool:
        return self.kind in BAD_KINDS


def prewarm() -> None:
    """Import what every case needs once, in the parent, so that each child starts warm."""
    import numpy  # noqa: F401
    import rich.console  # noqa: F401
    import sympy  # noqa: F401

    import symbias.cli  # noqa: F401
    import symbias.pipeline  # noqa: F401
    from symbias.cli import build_parser

    build_parser()


def _snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    out = {}
    for path in sorted(folder.rglob("*")):
        if path.is_file() and not path.is_symlink():
            out[str(path.relative_to(folder))] = (path.read_bytes(), path.stat().st_mode & 0o777)
    return out


def _write_files(folder: Path, files: Mapping[str, bytes | str]) -> None:
    for name, content in files.items():
        target = folder / name
        if name.endswith("/"):
            target.mkdir(parents=True, exist_ok=True)
            continue
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8", "surrogateescape"))


def _child(case: Case, folder: Path, out_path: Path, err_path: Path, entry) -> None:
    """In the forked child: the console script's run, with stdout and stderr on files. Never returns."""
    status = 70
    try:
        import faulthandler

        faulthandler.disable()  # a crash is the judge's to report, not a dump on the parent's terminal
        os.chdir(folder)
        null = os.open(os.devnull, os.O_RDONLY)
        os.dup2(null, 0)
        out = os.open("/dev/full" if case.stdout == "full" else str(out_path), os.O_WRONLY | os.O_CREAT, 0o600)
        err = os.open(str(err_path), os.O_WRONLY | os.O_CREAT, 0o600)
        os.dup2(out, 1)
        os.dup2(err, 2)
        sys.stdout = open(1, "w", encoding="utf-8", closefd=False)
        sys.stderr = open(2, "w", encoding="utf-8", closefd=False)
        import warnings

        warnings.resetwarnings()  # a fresh interpreter's filters, whatever the parent had
        for category in (DeprecationWarning, PendingDeprecationWarning, ImportWarning, ResourceWarning):
            warnings.simplefilter("ignore", category)
        signal.signal(signal.SIGINT, signal.SIG_DFL)
        os.environ.update(case.env)
        if entry is None:
            from symbias.cli import main

            def entry(argv):
                return main(argv, guard_memory=True)

        try:
            status = entry(list(case.argv))
        except SystemExit as stop:  # argparse refusing an option
            status = stop.code if isinstance(stop.code, int) else (0 if stop.code is None else 2)
    except BaseException:  # noqa: BLE001 - any escape is the finding, written where the judge reads it
        traceback.print_exc()
        status = 70
    finally:
        for stream in (sys.stdout, sys.stderr):
            try:
                stream.flush()
            except OSError:
                pass
        os._exit(status if isinstance(status, int) and 0 <= status < 256 else 71)


@dataclass
class _Running:
    case: Case
    pid: int
    start: float
    folder: Path
    scratch: Path
    before: dict


def _start(case: Case, root: Path, entry) -> _Running:
    scratch = Path(tempfile.mkdtemp(prefix=f"case{case.index}-", dir=root))
    folder = scratch / "work"
    folder.mkdir()
    _write_files(folder, case.files)
    before = _snapshot(folder)
    sys.stdout.flush()
    sys.stderr.flush()
    pid = os.fork()
    if pid == 0:  # pragma: no cover - the child
        _child(case, folder, scratch / "stdout", scratch / "stderr", entry)
    return _Running(case, pid, time.monotonic(), folder, scratch, before)


def _finish(running: _Running, wait_status: int | None, usage, killed: bool) -> Outcome:
    seconds = time.monotonic() - running.start
    peak = usage.ru_maxrss if usage is not None else 0
    out = (running.scratch / "stdout").read_bytes().decode("utf-8", "replace") \
        if (running.scratch / "stdout").exists() else ""
    err = (running.scratch / "stderr").read_bytes().decode("utf-8", "replace") \
        if (running.scratch / "stderr").exists() else ""
    after = _snapshot(running.folder)
    case = running.case
    if killed:
        return Outcome(case, "hang", None, seconds, peak, "", err[-300:])
    if os.WIFSIGNALED(wait_status):
        name = signal.Signals(os.WTERMSIG(wait_status)).name
        return Outcome(case, "crash", None, seconds, peak, name, err[-300:])
    status = os.WEXITSTATUS(wait_status)
    try:
        kind, message, detail = judge(case, status, out, err, running.before, after)
    except Exception as failure:  # noqa: BLE001 - a judge that cannot judge is reported, never lost
        kind, message, detail = "traceback", "", f"the judge failed: {type(failure).__name__}: {failure}"
    if kind not in BAD_KINDS and peak * 1024 >= MEMORY_CEILING:
        kind, detail = "memory", f"peak resident memory {peak / 2**20:.2f} GiB"
    return Outcome(case, kind, status, seconds, peak, message, detail)


def run_cases(cases: Iterable[Case], limit: float = 20.0, jobs: int = 2, progress=None,
              entry=None) -> list[Outcome]:
    """Run cases, ``jobs`` at a time, each in its own forked child; return the outcomes in case order.

    ``entry(argv) -> status`` replaces the command line in the child (the
    tests of the judge use it to crash, hang or leave a file on purpose).
    """
    root = Path(tempfile.mkdtemp(prefix="symbias-adversarial-"))
    running: dict[int, _Running] = {}
    outcomes: list[Outcome] = []
    pending = iter(cases)
    exhausted = False
    try:
        while running or not exhausted:
            while not exhausted and len(running) < jobs:
                case = next(pending, None)
                if case is None:
                    exhausted = True
                    break
                started = _start(case, root, entry)
                running[started.pid] = started
            if not running:
                break
            outcomes += _reap(running, limit)
            if progress is not None:
                progress(len(outcomes))
    finally:
        for started in running.values():
            os.kill(started.pid, signal.SIGKILL)
            os.waitpid(started.pid, 0)
        shutil.rmtree(root, ignore_errors=True)
    return sorted(outcomes, key=lambda o: o.case.index)


def _reap(running: dict[int, _Running], limit: float) -> list[Outcome]:
    """Wait a little for any child; return the outcomes of those that ended or ran out of time."""
    done: list[Outcome] = []
    deadline = time.monotonic() + 0.05
    while time.monotonic() < deadline and not done:
        pid, wait_status, usage = os.wait4(-1, os.WNOHANG)
        if pid:
            started = running.pop(pid)
            done.append(_finish(started, wait_status, usage, killed=False))
            shutil.rmtree(started.scratch, ignore_errors=True)
        else:
            time.sleep(0.002)
    now = time.monotonic()
    for pid, started in list(running.items()):
        if now - started.start > limit:
            os.kill(pid, signal.SIGKILL)
            _, wait_status, usage = os.wait4(pid, 0)
            running.pop(pid)
            done.append(_finish(started, wait_status, usage, killed=True))
            shutil.rmtree(started.scratch, ignore_errors=True)
    return done


def run_case(case: Case, limit: float = 20.0, entry=None) -> Outcome:
    """Run one case and judge it."""
    return run_cases([case], limit, jobs=1, entry=entry)[0]


def judge(case: Case, status: int, out: str, err: str, before: Mapping, after: Mapping) -> tuple[str, str, str]:
    """(class, error line, detail) of a finished case (see the module docstring)."""
    lines = [line for line in err.splitlines() if line.strip() and not _WARNING.match(line)]
    message = lines[0] if lines else ""
    if "Traceback (most recent call last)" in err or status not in (0, 1, 2):
        return "traceback", message, err[-600:]
    damage = _damage(case, status, before, after)
    if damage:
        return "file damage", message, damage
    if status == 0:
        if case.invalid:
            return "wrong success", message, f"exit 0 on invalid input ({case.invalid})"
        problem = _output_problem(case, out)
        return ("wrong success", message, problem) if problem else ("success", message, "")
    if len(lines) != 1:
        return "untidy error", message, f"{len(lines)} error lines: {err[:400]!r}"
    match = _ERROR.match(lines[0])
    if not match or not _known_place(case, match["where"]):
        return "untidy error", message, f"error line does not name a file or option: {lines[0][:200]!r}"
    return "error", message, ""


def _known_place(case: Case, where: str) -> bool:
    """An error names a file of the case, an option, the program, the memory variable or an argument."""
    if where.startswith("--") or where.startswith("symbias") or where == "SYMBIAS_MEMORY_LIMIT":
        return True
    names = set(case.files) | set(case.argv) | {Path(a).name for a in case.argv} | set(case.env.values())
    return where in names or Path(where).name in {Path(n).name for n in names} or Path(where).exists()


def _damage(case: Case, status: int, before: Mapping, after: Mapping) -> str:
    allowed = set(case.outputs) if status == 0 else set()

    def may_write(name: str) -> bool:  # an output may be a folder (a design note's)
        return name in allowed or any(name.startswith(folder.rstrip("/") + "/") for folder in allowed)

    changed = [n for n in before if not may_write(n) and after.get(n) != before[n]]
    created = [n for n in after if n not in before and not may_write(n)]
    if changed:
        return f"changed or removed: {', '.join(changed[:3])}"
    if created:
        return f"left behind: {', '.join(created[:3])}"
    return ""


def _output_problem(case: Case, out: str) -> str:
    """Why a successful run's output is wrong, or ''."""
    argv = case.argv
    if case.stdout == "full":
        return "exit 0 although stdout could not be written"
    writes_file = any(flag in argv for flag in ("-o", "--output"))
    if not out.strip() and not writes_file:
        return "exit 0 with nothing on stdout"
    if "--json" in argv or ("--format" in argv and argv[argv.index("--format") + 1:][:1] == ("json",)):
        try:
            json.loads(out)
        except ValueError as err:
            return f"--json output does not parse: {err}"
    if "--format" in argv and argv[argv.index("--format") + 1:][:1] == ("python",):
        return python_problem(out) or ""
    return ""


_PYTHON_NODES = {
    ast.Module, ast.Expr, ast.Constant, ast.Import, ast.alias, ast.FunctionDef, ast.arguments, ast.arg, ast.Assign,
    ast.Tuple, ast.Name, ast.Load, ast.Store, ast.Call, ast.Attribute, ast.keyword, ast.BinOp, ast.UnaryOp,
    ast.Return, ast.Add, ast.Sub, ast.Mult, ast.Div, ast.Pow, ast.USub, ast.UAdd,
}


def python_problem(source: str) -> str | None:
    r'''What in a generated module goes beyond numpy formulas with docstrings, or None.

    Allowed: the node kinds a numpy formula needs, strings only as docstrings,
    ``import numpy`` only, names that are arguments, ``numpy``, ``float`` or the
    locals ``_top`` and ``_bottom``, attributes of ``numpy`` only; and the
    module must compile (a sum too long for one line does not).

    Examples
    --------
    >>> python_problem('"""doc"""\nimport numpy\ndef f(x):\n    return numpy.sqrt(x)\n') is None
    True
    >>> python_problem('import os\n')
    'an import other than numpy'
    '''
    try:
        tree = ast.parse(source)
        compile(tree, "<generated>", "exec")
    except (SyntaxError, RecursionError, MemoryError, ValueError) as err:
        return f"does not compile: {type(err).__name__}: {err}"
    bodies = [tree.body] + [n.body for n in ast.walk(tree) if isinstance(n, ast.FunctionDef)]
    docs = {id(body[0].value) for body in bodies if body and isinstance(body[0], ast.Expr)}
    arguments = {a.arg for n in ast.walk(tree) if isinstance(n, ast.FunctionDef) for a in n.args.args}
    for node in ast.walk(tree):
        if type(node) not in _PYTHON_NODES:
            return f"node {type(node).__name__}"
        if isinstance(node, ast.Constant) and isinstance(node.value, str) and id(node) not in docs:
            return "a string that is not a docstring"
        if isinstance(node, ast.Import) and [a.name for a in node.names] != ["numpy"]:
            return "an import other than numpy"
        if isinstance(node, ast.Name) and node.id not in arguments | {"numpy", "float", "_top", "_bottom"}:
            return f"the name {node.id}"
        if isinstance(node, ast.Attribute) and not (isinstance(node.value, ast.Name) and node.value.id == "numpy"):
            return "an attribute of something other than numpy"
    return None
