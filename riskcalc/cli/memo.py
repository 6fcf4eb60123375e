"""`riskcalc memo`: rebuild the decision memo of a finished run, and print it to PDF."""

from __future__ import annotations

import shutil
import subprocess
import tempfile
from pathlib import Path

import typer

from ..errors import InputError
from . import app

#: Flags for a headless Chromium that makes no network requests of its own.
CHROMIUM_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                  "--disable-component-update", "--disable-sync", "--no-first-run")


def find_chromium() -> str | None:
    """Path of a Chromium executable on PATH (``chromium``, then ``chromium-browser``), or None."""
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


def print_pdf(html_path, pdf_path, *, timeout=120) -> Path:
    """Print ``html_path`` to ``pdf_path`` with headless Chromium (written beside, then renamed).

    Raises
    ------
    InputError
        When Chromium is not installed or the print fails.
    """
    exe = find_chromium()
    if exe is None:
        raise InputError("--pdf needs Chromium, which was not found on PATH; install it (Debian: apt-get install "
                         "chromium) or open memo.html in a browser and print it", html_path)
    html_path, pdf_path = Path(html_path).resolve(), Path(pdf_path).resolve()
    part = pdf_path.with_name(f".{pdf_path.name}.partial")
    with tempfile.TemporaryDirectory(prefix="riskcalc-chromium-") as profile:
        cmd = [exe, *CHROMIUM_FLAGS, f"--user-data-dir={profile}", "--no-pdf-header-footer",
               f"--print-to-pdf={part}", html_path.as_uri()]
        try:
            proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
        except subprocess.TimeoutExpired:
            part.unlink(missing_ok=True)
            raise InputError(f"Chromium did not finish printing within {timeout} s", html_path) from None
    if proc.returncode != 0 or not part.exists() or part.stat().st_size == 0:
        part.unlink(missing_ok=True)
        last = (proc.stderr.strip().splitlines() or ["no message"])[-1][:200]
        raise InputError(f"Chromium could not print the memo to PDF (exit {proc.returncode}: {last})", html_path)
    part.replace(pdf_path)
    return pdf_path


@app.command()
def memo(
    outdir: Path = typer.Argument(..., help="Output directory of a finished `riskcalc run`."),
    pdf: bool = typer.Option(False, "--pdf", help="Also print memo.pdf through headless Chromium."),
):
    """Rebuild memo.md and memo.html of a finished run from its summary, tables and figures.

    Example:

        riskcalc memo out/amberlow --pdf

    rewrites out/amberlow/memo.md and memo.html and prints out/amberlow/memo.pdf.
    """
    from ..outputs.memo import rebuild_memo

    if pdf and find_chromium() is None:
        raise InputError("--pdf needs Chromium, which was not found on PATH; install it (Debian: apt-get install "
                         "chromium) or open memo.html in a browser and print it", outdir)
    md, page = rebuild_memo(outdir)
    typer.echo(f"memo: {md}")
    typer.echo(f"memo: {page}")
    if pdf:
        typer.echo(f"memo: {print_pdf(page, Path(outdir) / 'memo.pdf')}")
