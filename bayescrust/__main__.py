"""``python -m bayescrust``: the command line (as the ``bayescrust`` script)."""

import sys

from .cli import main

if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
