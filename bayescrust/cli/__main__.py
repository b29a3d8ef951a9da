"""``python -m bayescrust.cli``: the command line."""

import sys

from . import main

if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
