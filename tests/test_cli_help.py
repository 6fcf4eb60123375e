"""`--help` of every command: square-bracketed scenario sections survive typer's Rich markup; one module a command."""

from __future__ import annotations

import inspect
import re

import pytest
import typer.models
from typer.testing import CliRunner

import riskcalc.cli as cli
from riskcalc.cli import app

COMMANDS = ("new", "check", "run", "hazard", "fit", "sensitivity", "compare", "memo", "portfolio")


def _help(*args) -> str:
    res = CliRunner().invoke(app, [*args, "--help"], env={"COLUMNS": "100", "TERMINAL_WIDTH": "100"})
    assert res.exit_code == 0, res.output
    return res.output


def _written(name: str) -> str:
    """Every help text as written in the command's module: its docstring and each parameter's help."""
    func = getattr(getattr(cli, name), name)
    texts = [inspect.getdoc(func) or ""]
    texts += [
        p.default.help
        for p in inspect.signature(func).parameters.values()
        if isinstance(p.default, typer.models.ParameterInfo) and p.default.help
    ]
    return "\n".join(t.replace("\\[", "[") for t in texts)


def test_run_and_sensitivity_help_show_the_sensitivity_section():
    run, sens = _help("run"), _help("sensitivity")
    assert "[sensitivity]" in run and "[[alternatives]]" in run and "[economics]" in run
    assert "[sensitivity]" in sens and "[sensitivity].n" in sens and "[sensitivity].seed" in sens


@pytest.mark.parametrize("name", COMMANDS)
def test_every_bracketed_word_in_a_help_text_is_printed(name):
    """Rich markup would take [sensitivity] for a style tag and print nothing; every bracket must survive."""
    out = _help(name)
    words = set(re.findall(r"\[\[?[a-z_]+\]?\](?:\.[a-z_]+)?", _written(name)))
    for w in words:
        assert w in out, (name, w)
    assert "\\[" not in out  # escaped, not printed with its backslash
    assert "Example" in out


def test_each_command_lives_in_its_own_module():
    names = {c.name: c.callback for c in app.registered_commands}
    assert set(names) == set(COMMANDS)
    for name, func in names.items():
        assert func.__module__ == f"riskcalc.cli.{name}" and func.__name__ == name


def test_root_help_carries_the_short_caution():
    from riskcalc.outputs.labels import CAUTION_SHORT

    out = " ".join(_help().split())  # Rich wraps the paragraph to the terminal; compare with single spaces
    assert f"Caution: {CAUTION_SHORT}" in out
