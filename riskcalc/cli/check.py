"""`riskcalc check`: validate a scenario and every table it names, without computing."""

from __future__ import annotations

from pathlib import Path

import typer


def check(scenario: Path = typer.Argument(..., help="Scenario file (.toml).")):
    """Validate a scenario and every table it names, without computing.

    Example:

        riskcalc check scenarios/amberlow_levee/scenario.toml

    prints one line: the realizations, the failure modes (from [[failure_modes]]), the number of
    input files and any further [[loadings]]; a bad file prints the file, row and column at fault and exits with status 2.
    """
    from ..workflows import check_scenario

    sc = check_scenario(scenario)
    typer.echo(
        f"{scenario}: valid. {sc.ensemble.size} realizations ({sc.ensemble.family}, {sc.ensemble.quantity}), "
        f"{len(sc.model.failure_modes)} failure mode(s): {', '.join(sc.model.failure_mode_names)}; "
        f"{len(sc.files)} input file(s)."
        + "".join(
            f" Loading '{ld.name}' ({ld.kind}): {len(ld.failure_mode_names)} failure mode(s)."
            for ld in getattr(sc, "loadings", ())
        )
    )
