"""The `demo` command (not built yet)."""

from auroraplan.errors import InputError


def add_arguments(parser):
    parser.add_argument("rest", nargs="*", help="(not built yet)")


def run(args):
    raise InputError("the demo command is not built yet")
