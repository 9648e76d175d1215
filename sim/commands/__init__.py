"""The sub-commands of ``railfault``, one module each.

Each module has ``register(sub)``, which adds its parser to the sub-parsers of
the ``railfault`` command and sets ``func``; the function returns the exit
status. Adding a sub-command is a module here and one line in :data:`COMMANDS`.
"""
from sim.commands import check, compare, faultmap, report, run, schema, sweep

#: Every sub-command, in the order ``railfault --help`` lists them.
COMMANDS = (check, faultmap, run, report, compare, sweep, schema)

__all__ = ["COMMANDS"]
