"""The ``riskcalc`` command line: thin wrappers over :mod:`riskcalc.workflows`.

One module a command, named after it (new, check, run, hazard, fit, sensitivity, compare, memo, portfolio),
each holding one function of that name; this module only assembles them into the app and runs it.
Bad input prints one line on stderr and exits with status 2.

Help texts are written as plain text. Typer renders them with Rich markup, which would take a
square-bracketed word such as ``[sensitivity]`` for a style tag and drop it, so :func:`help_text`
escapes every bracket (and joins the lines of each prose paragraph, keeping indented examples)
when a command is added to the app.
"""

from __future__ import annotations

import inspect
import re
import sys

import typer
import typer.core
import typer.models

from .. import __version__
from ..errors import InputError
from ..outputs.labels import CAUTION_SHORT

#: Rich renders the help (and reads markup in it); without Rich, click prints it as it is.
_RICH_MARKUP = bool(getattr(typer.core, "HAS_RICH", True))


def escape_brackets(text: str) -> str:
    """Every ``[`` not already escaped gets a backslash, so that Rich markup prints it (idempotent)."""
    return re.sub(r"(?<!\\)\[", r"\\[", text) if _RICH_MARKUP else text


def help_text(doc) -> str:
    """A docstring or option help as typer should get it: prose paragraphs on one line each (the terminal
    wraps them), indented lines (examples) kept as written, square brackets escaped."""
    paragraphs = []
    for para in inspect.cleandoc(doc or "").split("\n\n"):
        lines = para.split("\n")
        paragraphs.append(para if any(ln.startswith(" ") for ln in lines) else " ".join(ln.strip() for ln in lines))
    return escape_brackets("\n\n".join(paragraphs))


app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    rich_markup_mode="rich",
    help=help_text(f"Flood, dam and levee risk from an ensemble of frequency curves.\n\nCaution: {CAUTION_SHORT}"),
)


def _version(value: bool):
    if value:
        typer.echo(f"riskcalc {__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    version: bool = typer.Option(
        False, "--version", callback=_version, is_eager=True, help="Print the version and exit."
    ),
):
    pass


def _add(module) -> None:
    """Add the command of ``module`` (its function named after the module) to the app, help texts prepared."""
    name = module.__name__.rsplit(".", 1)[-1]
    func = getattr(module, name)
    for p in inspect.signature(func).parameters.values():
        info = p.default
        if isinstance(info, typer.models.ParameterInfo) and info.help:
            info.help = help_text(info.help)
    app.command(name, help=help_text(func.__doc__))(func)


from . import check, run, hazard, fit, sensitivity, compare, memo, portfolio, new  # noqa: E402

for _module in (new, check, run, hazard, fit, sensitivity, compare, memo, portfolio):
    _add(_module)


def main(argv=None):
    """Entry point: runs the app, turning input errors into one line and exit status 2."""
    try:
        rv = app(args=argv, standalone_mode=False)
    except InputError as exc:
        typer.echo(f"riskcalc: error: {exc}", err=True)
        sys.exit(2)
    except typer.Exit as exc:
        sys.exit(exc.exit_code)
    except typer.Abort:
        typer.echo("riskcalc: aborted", err=True)
        sys.exit(130)
    except KeyboardInterrupt:
        typer.echo("riskcalc: interrupted; no results were written", err=True)
        sys.exit(130)
    except Exception as exc:
        # usage errors (missing or unknown options) from click, or the copy of click that typer vendors
        if hasattr(exc, "show") and hasattr(exc, "exit_code") and type(exc).__module__.endswith("exceptions"):
            exc.show()
            sys.exit(2)
        raise
    if rv == 130:  # click returns 130 for Ctrl-C when standalone_mode=False
        typer.echo("riskcalc: interrupted; no results were written", err=True)
        sys.exit(130)
    sys.exit(rv if isinstance(rv, int) and not isinstance(rv, bool) else 0)
