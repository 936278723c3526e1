"""``python -m orcscreen``: the command line."""

import sys

from orcscreen.cli import main

if __name__ == "__main__":
    sys.exit(main())
