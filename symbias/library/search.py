"""Where topologies are found: the library folders, loading them all, and looking one up.

Top layer of the library package (folders -> mapping of identifier to
:class:`~symbias.library.topology.Topology`).  Folders are searched in this
order: those given on the command line (``--library DIR``), those in the
environment variable ``SYMBIAS_LIBRARY`` (``os.pathsep``-separated), then the
shipped library (``topologies/`` next to the package in a source checkout,
else the copy installed with the package).  An identifier defined twice is an
error.

Examples
--------
>>> library = load_library([shipped_dir()])
>>> library["bjt-simple-mirror"].roles["input"]
'Iref'
"""

from __future__ import annotations

import difflib
import os
import sys
import sysconfig
from pathlib import Path
from types import MappingProxyType
from typing import Iterable, Mapping

from ..errors import LibraryError
from .reading import identifier_line, load_topology
from .topology import Topology

__all__ = ["ENV_VAR", "shipped_dir", "library_dirs", "load_library", "find_topology", "resolve"]

#: Environment variable listing extra library folders (``os.pathsep``-separated).
ENV_VAR = "SYMBIAS_LIBRARY"


def shipped_dir() -> Path:
    """The folder of the shipped library.

    ``topologies/`` next to the package (source checkout or editable
    install), else the copy installed as package data files
    (``<prefix>/share/symbias/topologies``).

    Examples
    --------
    >>> (shipped_dir() / "bjt-wilson-mirror.toml").is_file()
    True
    """
    import site

    candidates = [Path(__file__).resolve().parents[2] / "topologies"]
    for base in (sysconfig.get_path("data"), sys.prefix, getattr(sys, "base_prefix", sys.prefix)):
        candidates.append(Path(base) / "share" / "symbias" / "topologies")
    user_base = getattr(site, "getuserbase", None)  # absent in some embedded interpreters
    if user_base is not None:
        candidates.append(Path(user_base()) / "share" / "symbias" / "topologies")
    for candidate in candidates:
        if candidate.is_dir() and any(candidate.glob("*.toml")):
            return candidate
    return candidates[0]


def library_dirs(extra_dirs: Iterable[str | Path] = (), environ: Mapping[str, str] | None = None) -> tuple[Path, ...]:
    """Folders searched for topologies, in order: ``extra_dirs``, ``$SYMBIAS_LIBRARY``, shipped.

    Examples
    --------
    >>> library_dirs(["mine"], environ={"SYMBIAS_LIBRARY": "team"})[:2]
    (PosixPath('mine'), PosixPath('team'))
    """
    environ = os.environ if environ is None else environ
    dirs = [Path(d) for d in extra_dirs]
    dirs += [Path(d) for d in environ.get(ENV_VAR, "").split(os.pathsep) if d.strip()]
    dirs.append(shipped_dir())
    unique: list[Path] = []
    for d in dirs:
        if d not in unique:
            unique.append(d)
    return tuple(unique)


def load_library(dirs: Iterable[str | Path] | None = None, *, extra_dirs: Iterable[str | Path] = (),
                 environ: Mapping[str, str] | None = None) -> Mapping[str, Topology]:
    """Every topology of the given folders (default: :func:`library_dirs`), by identifier.

    Files already read with the same text are not parsed again
    (:func:`~symbias.library.reading.parse_topology` keeps its results).

    Parameters
    ----------
    dirs : iterable of path, optional
        Folders to read, in order; default ``library_dirs(extra_dirs, environ)``.
    extra_dirs : iterable of path
        Folders searched before the environment variable and the shipped library.
    environ : mapping, optional
        Environment to read ``SYMBIAS_LIBRARY`` from (default ``os.environ``).

    Raises
    ------
    LibraryError
        For a missing folder, a malformed file or an identifier defined twice.

    Examples
    --------
    >>> library = load_library([shipped_dir()])
    >>> len(library) >= 28, "mos-regulated-cascode" in library
    (True, True)
    """
    folders = tuple(Path(d) for d in dirs) if dirs is not None else library_dirs(extra_dirs, environ)
    found: dict[str, Topology] = {}
    for folder in folders:
        if not folder.is_dir():
            raise LibraryError("library folder does not exist" if not folder.exists() else "not a folder (a library "
                               "folder holds topology .toml files)", str(folder))
        for file in sorted(folder.glob("*.toml")):
            topology = load_topology(file)
            if topology.id in found:
                first = found[topology.id].path
                raise LibraryError(f"identifier {topology.id!r} is already defined in {first}", str(file),
                                   identifier_line(file.read_text(encoding="utf-8")))
            found[topology.id] = topology
    return MappingProxyType(found)


def find_topology(identifier: str, extra_dirs: Iterable[str | Path] = (),
                  environ: Mapping[str, str] | None = None) -> Topology:
    """The topology with this identifier.

    Raises
    ------
    LibraryError
        If no library folder defines it (the message suggests close names).

    Examples
    --------
    >>> find_topology("widlar-bandgap").roles["output"]
    'vref'
    """
    folders = library_dirs(extra_dirs, environ)
    named = next((f / f"{identifier}.toml" for f in folders if (f / f"{identifier}.toml").is_file()), None)
    if named is not None:
        # the usual case, a file named after its identifier: read that file only, and check by a
        # text scan (no parse) that no other file declares the same identifier
        topology = load_topology(named)
        if topology.id == identifier:
            _check_declared_once(identifier, named, folders)
            return topology
    library = load_library(folders)
    if identifier in library:
        return library[identifier]
    raise LibraryError(_unknown(identifier, library), identifier)


def _check_declared_once(identifier: str, chosen: Path, folders: Iterable[Path]) -> None:
    """Raise when a file other than ``chosen`` declares ``identifier`` (read as text, not parsed)."""
    import re

    pattern = re.compile(rf"^\s*id\s*=\s*[\"']{re.escape(identifier)}[\"']\s*(#.*)?$", re.M)
    for folder in folders:
        if not folder.is_dir():
            raise LibraryError("library folder does not exist" if not folder.exists() else "not a folder (a library "
                               "folder holds topology .toml files)", str(folder))
        for file in sorted(folder.glob("*.toml")):
            if file.resolve() != chosen.resolve() and pattern.search(file.read_text(encoding="utf-8")):
                raise LibraryError(f"identifier {identifier!r} is already defined in {chosen}", str(file),
                                   identifier_line(file.read_text(encoding="utf-8")))


def _unknown(name: str, library: Mapping[str, Topology]) -> str:
    close = difflib.get_close_matches(name, list(library), n=3)
    hint = f"; did you mean {', '.join(close)}?" if close else "; 'symbias list' shows the library"
    return f"not a netlist file nor a library topology{hint}"


def resolve(name_or_path: str, extra_dirs: Iterable[str | Path] = (),
            environ: Mapping[str, str] | None = None):
    """A ``(Circuit, Topology or None)`` pair from a library identifier or a file.

    A path to a ``.toml`` file is read as a library file; any other existing
    file as a netlist; anything else is looked up as an identifier.

    Raises
    ------
    LibraryError
        For an unknown identifier or a malformed library file.
    NetlistError
        For a netlist file that cannot be read or parsed.

    Examples
    --------
    >>> circuit, topology = resolve("mos-cascode-mirror")
    >>> topology.id, len(circuit.devices)
    ('mos-cascode-mirror', 4)
    """
    from ..netlist import read_netlist

    path = Path(name_or_path)
    if path.is_file() and path.suffix.lower() == ".toml":
        topology = load_topology(path)
        return topology.circuit(), topology
    if path.is_file() or path.suffix or any(sep in name_or_path for sep in ("/", os.sep)):
        return read_netlist(path), None  # for a missing file: the reader's "cannot read" error
    topology = find_topology(name_or_path, extra_dirs, environ)
    return topology.circuit(), topology
