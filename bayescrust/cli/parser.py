"""The argument parser, built from each command module's ``add_parser(subparsers)``.

A new command is one new module in this package (with ``add_parser`` registering a sub-parser
whose ``func`` default is the command, ``cmd_NAME(args) -> int``) plus one entry in
:data:`COMMANDS`; the order of :data:`COMMANDS` is the order of ``bayescrust -h``.
"""

from __future__ import annotations

import argparse

from . import chart, check, compare, demo, forward, grid, invert, plan, profile

__all__ = ["COMMANDS", "build_parser"]

#: Command modules, in the order shown by ``bayescrust -h``.
COMMANDS = (demo, invert, compare, chart, profile, grid, plan, forward, check)


def build_parser() -> argparse.ArgumentParser:
    """The ``bayescrust`` parser with every command of :data:`COMMANDS` registered."""
    from .. import __version__

    p = argparse.ArgumentParser(
        prog="bayescrust",
        description="Posterior probabilities of rock type, temperature, porosity and melt from "
                    "seismic velocities of oceanic crust and uppermost mantle.",
        epilog="Exit codes: 0 success, 1 run failed, 2 bad input. Interpretations are "
               "model-dependent; see docs/interpretation.md.")
    p.add_argument("--version", action="version", version=f"bayescrust {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for command in COMMANDS:
        command.add_parser(sub)
    for action in sub._choices_actions:  # every subcommand's --help: a description, and
        _tidy_help(sub.choices[action.dest], action.help)  # its required options shown as such
    return p


def _tidy_help(sp: argparse.ArgumentParser, summary: str | None) -> None:
    if sp.description is None and summary:
        sp.description = summary[0].upper() + summary[1:] + "."
    required = [a for a in sp._optionals._group_actions if a.required]
    if required:
        group = sp.add_argument_group("required options")
        for a in required:
            sp._optionals._group_actions.remove(a)
            group._group_actions.append(a)
