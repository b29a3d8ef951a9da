"""Command line: a thin shell over the Python API.

``bayescrust demo | invert | compare | chart | forward | check``; see ``bayescrust -h``.
Exit codes: 0 success, 1 failure of the run, 2 bad input (study file, options, output folder).
Every command has a Python equivalent (``bayescrust.invert_layer`` and friends); this package only
reads settings, calls the API, and writes files atomically.

Modules: :mod:`.shell` (input errors, atomic folders, tables, figures, warnings, seeds, common
options), :mod:`.layers` (shared by the layer commands), one module per command (:mod:`.invert`,
:mod:`.compare`, :mod:`.chart`, :mod:`.forward`, :mod:`.check`, :mod:`.demo`) and
:mod:`.parser` (the registry of commands and the argument parser).
"""

from __future__ import annotations

import contextlib
import os
import sys

from ..config import StudyError
from .chart import cmd_chart as cmd_chart
from .chart import probability_table as probability_table
from .check import cmd_check as cmd_check
from .compare import cmd_compare as cmd_compare
from .demo import DEMO_FILES as DEMO_FILES
from .demo import cmd_demo as cmd_demo
from .demo import demo_text as demo_text
from .forward import cmd_forward as cmd_forward
from .invert import cmd_invert as cmd_invert
from .parser import build_parser
from .shell import AtomicFolder as AtomicFolder
from .shell import InputError

__all__ = ["main"]


@contextlib.contextmanager
def _quiet_interrupt():
    """On Ctrl-C, silence stdout/stderr until the interrupt reaches :func:`main`: libraries on
    the way (emcee prints the failing call and a traceback) then add nothing to the one clean
    message. Only in the main thread (where signal handlers live)."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return
    streams = (sys.stdout, sys.stderr)
    sink = open(os.devnull, "w")  # noqa: SIM115 - closed below

    def handler(signum, frame):
        sys.stdout = sys.stderr = sink
        _received["signal"] = signum
        raise KeyboardInterrupt

    # SIGTERM (a batch system ending a job, `timeout`) ends a run as Ctrl-C does: through the
    # atomic folder's clean-up, so no partial folder is left behind
    previous = {sig: signal.signal(sig, handler) for sig in (signal.SIGINT, signal.SIGTERM)}
    try:
        yield
    finally:
        for sig, prev in previous.items():
            signal.signal(sig, prev)
        sys.stdout, sys.stderr = streams
        sink.close()


#: The signal that ended the last run (exit code 128 + signal number, the shell's convention).
_received: dict = {}


def main(argv=None) -> int:
    """Run the command line; return the exit code (0 ok, 1 run failed, 2 bad input)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse: --help / --version (0) or a usage error (2)
        return int(exc.code) if isinstance(exc.code, int) else 2
    streams = (sys.stdout, sys.stderr)
    try:
        with _quiet_interrupt():
            return args.func(args)
    except (StudyError, InputError) as exc:
        print(f"bayescrust: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        sys.stdout, sys.stderr = streams
        print("bayescrust: interrupted; no output written", file=sys.stderr)
        return 128 + int(_received.pop("signal", 2))
    except Exception as exc:  # noqa: BLE001 - one clean message, no traceback
        print(f"bayescrust: run failed: {type(exc).__name__}: {exc}", file=sys.stderr)
        return 1
