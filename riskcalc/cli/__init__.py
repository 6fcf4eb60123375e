"""The ``riskcalc`` command line: thin wrappers over :mod:`riskcalc.workflows`.

One module a command group; this one assembles the app. Bad input prints one
line on stderr and exits with status 2.
"""

from __future__ import annotations

import sys

import typer

from .. import __version__
from ..errors import InputError

CAUTION = ("Caution: screening support for qualified, licensed engineers. The governing agency's current "
           "policy and local codes decide; results are only as good as their inputs.")

app = typer.Typer(add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
                  help="Flood, dam and levee risk from an ensemble of frequency curves.\n\n" + CAUTION)


def _version(value: bool):
    if value:
        typer.echo(f"riskcalc {__version__}")
        raise typer.Exit()


@app.callback()
def _root(version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                       help="Print the version and exit.")):
    pass


def _fmt(v: float) -> str:
    return f"{v:,.4g}" if abs(v) < 1e6 else f"{v:,.0f}"


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




# command modules register themselves on `app` when imported
from . import hazard as _hazard  # noqa: E402,F401
from . import risk as _risk  # noqa: E402,F401
from . import portfolio as _portfolio  # noqa: E402,F401
from . import sensitivity as _sensitivity  # noqa: E402,F401
from . import memo as _memo  # noqa: E402,F401
from . import compare as _compare  # noqa: E402,F401
