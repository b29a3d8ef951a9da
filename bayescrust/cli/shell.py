"""The shared shell of every command: input errors, atomic output folders, writing tables and
figures, collecting warnings, per-layer seeds and the common options."""

from __future__ import annotations

import contextlib
import shutil
import sys
import tempfile
import warnings
from pathlib import Path

from ..config import layer_slug

__all__ = ["InputError", "AtomicFolder", "RESULTS_MARKER", "FIG_FORMATS", "slug", "say", "alert",
           "write_text", "write_table", "save_figure", "use_agg", "layer_seed", "Warnings",
           "add_common_options", "seed_value", "folder_command"]

FIG_FORMATS = ("png", "pdf")


class InputError(Exception):
    """Bad input found by the command line (exit code 2)."""


# ---------------------------------------------------------------------------------------------
# Output folders: written into a temporary sibling, renamed into place on success
# ---------------------------------------------------------------------------------------------


#: File that marks a folder as written by bayescrust: ``--overwrite`` replaces no other folder.
RESULTS_MARKER = ".bayescrust-results"


class AtomicFolder:
    """Context manager yielding a temporary folder that becomes ``final`` on success.

    Refuses a non-empty existing folder unless ``overwrite``, and even then unless it is a
    results folder of bayescrust (:data:`RESULTS_MARKER`, or the ``run.toml`` of earlier
    versions) holding none of the run's inputs (``protect``: the study file, an input grid). On
    any failure the temporary folder (and any parent folders it had to create) is removed, so no
    partial output is left.
    """

    def __init__(self, final, *, overwrite: bool = False, option: str = "--out", protect=()):
        self.final = Path(final)
        self.overwrite = overwrite
        self.option = option
        self.protect = [Path(p) for p in protect if p]
        self.tmp: Path | None = None
        self.created: list[Path] = []

    def __enter__(self) -> Path:
        final = self.final
        if final.exists() or final.is_symlink():
            if not final.is_dir():
                raise InputError(f"{final}: {self.option}: exists and is not a folder")
            if any(final.iterdir()):
                self._check_replaceable(final)
        parent = final.absolute().parent
        missing = []
        p = parent
        while not p.exists():
            missing.append(p)
            p = p.parent
        try:
            for d in reversed(missing):
                d.mkdir()
                self.created.append(d)
            self.tmp = Path(tempfile.mkdtemp(prefix=f".{final.name}.partial-", dir=parent))
            self.tmp.chmod(_folder_mode())  # mkdtemp makes 0o700; results are for sharing
            from .. import __version__

            (self.tmp / RESULTS_MARKER).write_text(
                f"written by bayescrust {__version__}; `--overwrite` may replace this folder\n",
                encoding="utf-8")
        except OSError as exc:
            self._cleanup()
            reason = exc.strerror or str(exc)
            raise InputError(f"{final}: {self.option}: cannot write to this folder ({reason})"
                             ) from None
        return self.tmp

    def _check_replaceable(self, final: Path):
        if not self.overwrite:
            if not _is_results_folder(final):  # a user's own files: --overwrite would refuse
                raise InputError(f"{final}: {self.option}: folder exists, is not empty and was "
                                 "not written by bayescrust; choose another folder")
            raise InputError(f"{final}: {self.option}: folder already holds results; choose "
                             "another folder or pass --overwrite")
        here = final.resolve()
        for p in self.protect:
            if here in p.resolve().parents:
                raise InputError(f"{final}: {self.option}: --overwrite would delete {p}, an "
                                 "input of this run; choose another folder")
        if not _is_results_folder(final):
            raise InputError(f"{final}: {self.option}: --overwrite replaces only a results "
                             f"folder written by bayescrust (it holds {RESULTS_MARKER}); this "
                             "one is not: choose another folder")

    def _cleanup(self):
        if self.tmp is not None:
            shutil.rmtree(self.tmp, ignore_errors=True)
        for d in reversed(self.created):
            with contextlib.suppress(OSError):
                d.rmdir()

    def __exit__(self, exc_type, exc, tb):
        if exc_type is not None:
            self._cleanup()
            return False
        final = self.final
        if not final.exists():
            try:
                self.tmp.rename(final)
            except OSError as err:
                self._cleanup()
                raise InputError(f"{final}: {self.option}: cannot create the folder "
                                 f"({err.strerror or err})") from None
            return False
        old = None
        try:
            old = Path(tempfile.mkdtemp(prefix=f".{final.name}.old-",
                                        dir=final.absolute().parent))
            final.rename(old / "previous")
            try:
                self.tmp.rename(final)
            except OSError:
                (old / "previous").rename(final)  # put the previous results back
                raise
        except OSError as err:
            self._cleanup()
            raise InputError(f"{final}: {self.option}: cannot replace the folder "
                             f"({err.strerror or err}); previous results kept") from None
        finally:
            if old is not None:
                shutil.rmtree(old, ignore_errors=True)
        return False


def _is_results_folder(folder: Path) -> bool:
    """Whether ``folder`` was written by bayescrust (its marker; earlier versions: run.toml)."""
    if (folder / RESULTS_MARKER).is_file():
        return True
    run = folder / "run.toml"
    try:
        return run.is_file() and "bayescrust_version" in run.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return False


def _folder_mode() -> int:
    """Mode of a new folder under the current umask (what ``mkdir`` would give)."""
    import os

    mask = os.umask(0)
    os.umask(mask)
    return 0o777 & ~mask


def slug(name: str) -> str:
    """Folder-safe form of a layer name (see :func:`bayescrust.config.layer_slug`)."""
    return layer_slug(name)


def say(args, msg: str):
    """Progress and information on stderr (silenced by ``-q``)."""
    if not getattr(args, "quiet", False):
        print(msg, file=sys.stderr)


def alert(msg: str):
    """A warning on stderr, with or without ``-q``: a misfit or a run that did not converge
    must reach the user even when progress is silenced."""
    print(f"bayescrust: warning: {msg}", file=sys.stderr)


def write_text(path: Path, text: str):
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")


def write_table(folder: Path, stem: str, df, *, caption: str, index: bool = True,
                label: str | None = None, printable=None):
    """CSV (full precision) plus Markdown and LaTeX (``printable``: a manuscript-ready version
    of ``df``, e.g. rounded with units); ``label`` is the LaTeX label (unique per table)."""
    from ..report.tables import to_csv, to_latex, to_markdown

    shown = df if printable is None else printable
    write_text(folder / f"{stem}.csv", to_csv(df, index=index))
    write_text(folder / f"{stem}.md", to_markdown(shown, index=index))
    write_text(folder / f"{stem}.tex", to_latex(shown, index=index, caption=caption,
                                                 label=label or f"tab:{slug(stem)}"))


def save_figure(fig, folder: Path, stem: str):
    """Write ``fig`` in every :data:`FIG_FORMATS` (PNG at 200 dpi).

    A figure laid out by a layout engine (constrained layout) already fits its canvas and is
    saved as it is; others (e.g. corner plots) are cropped to their drawn extent
    (``bbox_inches="tight"``, which costs a second draw).
    """
    folder.mkdir(parents=True, exist_ok=True)
    bbox = None if fig.get_layout_engine() is not None else "tight"
    for fmt in FIG_FORMATS:
        fig.savefig(folder / f"{stem}.{fmt}", dpi=200 if fmt == "png" else None,
                    bbox_inches=bbox)


def use_agg():
    import matplotlib

    matplotlib.use("Agg", force=True)


def folder_command(args, run) -> int:
    """Shared shell of the commands that write a results folder: the Agg backend unless
    ``--no-figures``, ``run(tmp)`` into an atomic folder at ``args.out``, then print it."""
    if not args.no_figures:
        use_agg()
    with AtomicFolder(args.out, overwrite=args.overwrite,
                      protect=[getattr(args, "study", None)]) as tmp:
        run(tmp)
    print(args.out)
    return 0


def layer_seed(seed: int, index: int) -> int:
    """Seed of layer ``index``: an independent stream spawned from the study seed."""
    import numpy as np

    return int(np.random.SeedSequence(seed, spawn_key=(index,)).generate_state(1, np.uint64)[0]
               % (2**63))


class Warnings:
    """Collect warnings raised during a run; echo them to stderr once; keep them for the report."""

    def __init__(self, args):
        self.args = args
        self.messages: list[str] = []

    @contextlib.contextmanager
    def catch(self, context: str):
        with warnings.catch_warnings(record=True) as rec, _captured_logs() as logged:
            warnings.simplefilter("always")
            yield
        for name, text in logged:  # corner and arviz report through logging, not warnings
            msg = f"{context}: {name}: {text}"
            if msg not in self.messages:
                self.messages.append(msg)
                alert(msg)
        for w in rec:
            if issubclass(w.category, (DeprecationWarning, PendingDeprecationWarning)):
                continue
            if "ArviZ is undergoing a major refactor" in str(w.message):
                continue
            msg = f"{context}: {w.category.__name__}: {w.message}"
            if msg not in self.messages:
                self.messages.append(msg)
                alert(msg)


@contextlib.contextmanager
def _captured_logs(names=("", "arviz")):
    """Collect WARNING-and-above log records of the root and arviz loggers inside the block,
    instead of the stray "WARNING:root:..." / "arviz - WARNING - ..." lines they would print
    (the loggers' own handlers and propagation are restored after)."""
    import logging

    records: list[tuple[str, str]] = []

    class _Keep(logging.Handler):
        def emit(self, record):
            records.append((f"{record.name} log", record.getMessage()))

    keep = _Keep(level=logging.WARNING)
    saved = []
    for name in names:
        log = logging.getLogger(name)
        saved.append((log, log.handlers[:], log.propagate))
        log.handlers = [keep]
        log.propagate = False
    try:
        yield records
    finally:
        for log, handlers, propagate in saved:
            log.handlers = handlers
            log.propagate = propagate


def seed_value(text: str) -> int:
    """argparse type of ``--seed``: an integer in [0, 2**63 - 1] (else a usage error, exit 2)."""
    import argparse

    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a non-negative integer; got {text!r}"
                                         ) from None
    if not 0 <= v < 2**63:
        raise argparse.ArgumentTypeError(f"expected an integer in [0, 2**63 - 1]; got {v}")
    return v


def add_common_options(sp, *, out=True, seed=True, method=True, layer=None, figures=True):
    """Options shared by the study commands (quiet, output folder, seed, method, ...)."""
    sp.add_argument("-q", "--quiet", action="store_true",
                    help="no progress or messages (warnings are still printed)")
    if out:
        sp.add_argument("--out", required=out is True, default=None if out is True else out,
                        metavar="DIR", help="output folder (created atomically)")
        sp.add_argument("--overwrite", action="store_true",
                        help="replace an output folder that already holds results")
    if seed:
        sp.add_argument("--seed", type=seed_value, default=None,
                        help="random seed (default: the study file's seed, else 0)")
    if method:
        sp.add_argument("--method", choices=("mcmc", "exact"), default=None,
                        help="MCMC sampling or the exact reference (default: study file)")
    if figures:
        sp.add_argument("--no-figures", action="store_true", help="tables only")
    if layer == "many":
        sp.add_argument("--layer", action="append", metavar="NAME",
                        help="only this layer (repeatable; default: every layer)")
