"""Run auroraplan from a checkout: ``python cli.py COMMAND``."""

import sys

from auroraplan.cli import main

if __name__ == "__main__":
    sys.exit(main())
