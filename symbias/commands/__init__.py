"""Sub-commands of the ``symbias`` command line, one module each.

Each module in :data:`COMMANDS` defines ``register(subparsers)``, which adds
its sub-parser and sets ``func`` to a function ``run(args) -> int`` (the exit
status).  Modules are imported only when their command runs or when the
parser is built, and must keep heavy imports (lcapy, matplotlib) inside
``run``.
"""

#: Module names under ``symbias.commands``, in the order ``--help`` lists them.
COMMANDS: tuple[str, ...] = ("derive", "bias", "sweep", "frequency", "noise", "deck", "note", "list", "show", "rank")
