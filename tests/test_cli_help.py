"""The command line's help: every option of every subcommand says what it does and, where it
has a default, what the default is; ``run`` names every accepted form of a task and an
evolver; the help pages link the guides; and the help loads nothing of the library.

Outside reference: argparse itself (its help pages as ``--help`` prints them, and each
option's help with ``%(default)`` filled in as argparse fills it) and the defaults in
:mod:`neuroyard.core.defaults`.
"""

from __future__ import annotations

import argparse
import subprocess
import sys

import pytest

from neuroyard.cli.main import main
from neuroyard.cli.parser import GUIDES, build_parser
from neuroyard.core import defaults

PARSER = build_parser()
SUBCOMMANDS: dict[str, argparse.ArgumentParser] = next(
    a.choices for a in PARSER._actions if isinstance(a, argparse._SubParsersAction)
)


def options(parser: argparse.ArgumentParser) -> list[argparse.Action]:
    return [a for a in parser._actions if not isinstance(a, argparse._HelpAction)]


def shown_help(parser: argparse.ArgumentParser, action: argparse.Action) -> str:
    """The option's help as argparse prints it (``%(default)g`` and the like filled in)."""
    return action.help % dict(vars(action), prog=parser.prog) if action.help else ""


def written(default: object) -> set[str]:
    """The ways a help text may write ``default``."""
    forms = {str(default)}
    if isinstance(default, float):
        forms.add(f"{default:g}")
    if isinstance(default, int) and not isinstance(default, bool):
        forms.add(f"{default:,}")
    return forms


def help_page(argv: list[str], capsys) -> str:
    with pytest.raises(SystemExit) as done:
        main([*argv, "--help"])
    assert done.value.code == 0
    return capsys.readouterr().out


@pytest.mark.parametrize("name", sorted(SUBCOMMANDS))
def test_every_option_has_help_and_states_its_default(name):
    parser = SUBCOMMANDS[name]
    for action in options(parser):
        label = f"neuroyard {name} {'/'.join(action.option_strings) or action.dest}"
        text = shown_help(parser, action)
        assert text.strip(), f"{label} has no help"
        # a flag's False and a repeatable option's [] are no default worth stating
        if action.default not in (None, False, []) and not action.required:
            assert "default" in text, f"{label}: default {action.default} not stated: {text}"
            assert any(form in text for form in written(action.default)), (label, text)


def test_the_defaults_shown_are_those_of_the_defaults_module():
    by_dest = {a.dest: a for a in options(SUBCOMMANDS["run"])}
    assert by_dest["runs"].default == defaults.DEFAULT_RUNS
    assert by_dest["seed"].default == defaults.DEFAULT_SEED
    assert by_dest["workers"].default == defaults.DEFAULT_WORKERS
    assert by_dest["store"].default == defaults.DEFAULT_PATH
    assert f"default {defaults.DEFAULT_EVOLVER}" in by_dest["evolver"].help
    assert f"default {', '.join(defaults.QUICK_SUITE)}" in by_dest["task"].help
    compare = {a.dest: a for a in options(SUBCOMMANDS["compare"])}
    assert compare["alpha"].default == defaults.COMPARE_ALPHA
    replay = {a.dest: a for a in options(SUBCOMMANDS["replay"])}
    assert replay["steps"].default == defaults.REPLAY_STEPS


def test_run_names_every_form_of_a_task_and_an_evolver_and_the_guides(capsys):
    page = " ".join(help_page(["run"], capsys).split())  # argparse wraps the lines
    for form in ("gym:ENV_ID", "maze:PATH", "module:attr", "process:COMMAND"):
        assert form in page
    assert "registered task id" in page and "installed evolver's name" in page
    for guide in GUIDES:
        assert guide in page


def test_every_help_page_links_guides(capsys):
    top = help_page([], capsys)
    assert all(guide in top for guide in GUIDES)
    for name in SUBCOMMANDS:
        page = help_page([name], capsys)
        assert "guides (in the neuroyard source tree):" in page
        assert any(guide in page for guide in GUIDES), name


def test_the_help_loads_nothing_of_the_library():
    code = (
        "import sys\n"
        "from neuroyard.cli.parser import build_parser\n"
        "parser = build_parser()\n"
        "parser.format_help()\n"
        "for action in parser._subparsers._group_actions:\n"
        "    for sub in action.choices.values():\n"
        "        sub.format_help()\n"
        "print([m for m in ('numpy', 'numba', 'scipy', 'neuroyard.tasks', 'neuroyard.api') "
        "if m in sys.modules])\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
