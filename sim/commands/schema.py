"""``railfault schema``: the JSON Schema of the scenario format."""
from __future__ import annotations

import json

from sim.commands.common import EXIT_PASS, check_output, emit


def cmd_schema(args) -> int:
    from sim.schema import json_schema

    check_output(args.output)
    emit(json.dumps(json_schema(), indent=2), args.output, json=True)
    return EXIT_PASS


def register(sub) -> None:
    s = sub.add_parser("schema", help="print the JSON Schema of the scenario format")
    s.add_argument("-o", "--output", metavar="PATH", help="write the schema to PATH")
    s.set_defaults(func=cmd_schema)
