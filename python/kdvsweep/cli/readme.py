"""The README's command table, generated from the parsers (``python -m kdvsweep.cli.readme``).

A test compares the table in README.md with :func:`command_table`, so the README cannot drift from
the options the commands take.
"""

from __future__ import annotations

import argparse

from . import build_parser
from .common import PROG

HEADER = "| command | what it does |\n|---|---|"


def _subcommands(parser: argparse.ArgumentParser) -> list[tuple[str, str, argparse.ArgumentParser]]:
    """``(name, help, parser)`` of each sub-command, in the order they were added."""
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            helps = {a.dest: a.help or "" for a in action._choices_actions}
            return [(name, helps.get(name, ""), p) for name, p in action.choices.items()]
    return []


def _option(action: argparse.Action) -> str:
    """``--out DIR``, ``--runs``, ``--run ID ...``."""
    flag = max(action.option_strings, key=len)
    if action.nargs == 0:
        return flag
    metavar = action.metavar or action.dest.upper()
    more = " ..." if isinstance(action, argparse._AppendAction) else ""
    return f"{flag} {metavar}{more}"


def usage(parser: argparse.ArgumentParser) -> str:
    """One line: the command, its positionals, then its options in brackets, alternatives joined
    by ``|`` (as in ``[--workers N | --scheduler ADDR]``)."""
    groups = {id(a): g for g in parser._mutually_exclusive_groups for a in g._group_actions}
    words = [parser.prog]
    words += [str(a.metavar or a.dest) for a in parser._actions if not a.option_strings]
    done: set[int] = set()
    for action in parser._actions:
        if not action.option_strings or action.help == argparse.SUPPRESS:
            continue
        if isinstance(action, argparse._HelpAction) or id(action) in done:
            continue
        group = groups.get(id(action))
        members = group._group_actions if group is not None else [action]
        done.update(id(a) for a in members)
        words.append("[" + " | ".join(_option(a) for a in members) + "]")
    return " ".join(words)


def command_table() -> str:
    """The Markdown table of every ``kdvsweep`` command: its usage line and what it does."""
    rows = [HEADER]
    for _, text, parser in _subcommands(build_parser()):
        line = usage(parser).replace("|", "\\|")
        rows.append(f"| `{line}` | {text} |")
    return "\n".join(rows)


def options(parser: argparse.ArgumentParser) -> set[str]:
    """Every option string of a parser (``--help`` excluded)."""
    return {
        s
        for a in parser._actions
        if not isinstance(a, argparse._HelpAction)
        for s in a.option_strings
        if s.startswith("--")
    }


def subcommand_parsers() -> dict[str, argparse.ArgumentParser]:
    """``{name: parser}`` of every ``kdvsweep`` sub-command."""
    return {name: p for name, _, p in _subcommands(build_parser())}


__all__ = ["PROG", "command_table", "options", "subcommand_parsers", "usage"]

if __name__ == "__main__":  # pragma: no cover
    print(command_table())
