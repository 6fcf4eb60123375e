"""Shared helpers: small scenarios written into a temporary folder."""

from __future__ import annotations

import textwrap
from pathlib import Path

import os

import numpy as np
import pytest
from hypothesis import settings

# CI runs property tests on a fixed set of examples, so that a failure points at a change, not at chance
settings.register_profile("ci", derandomize=True, deadline=None)
if os.environ.get("CI"):
    settings.load_profile("ci")


@pytest.fixture(autouse=True)
def _fixed_run_date(monkeypatch):
    """Outputs carry the run date; fix it so byte-identity tests cannot straddle midnight."""
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1798761600")  # 2027-01-01


RATING = "discharge_m3s,stage_m\n10,1.0\n100,2.0\n1000,4.0\n10000,7.0\n100000,11.0\n"
CONSEQ = (
    "stage_m,damage_breach_usd,damage_no_breach_usd,life_loss_breach\n"
    "2.0,0,0,0\n4.0,1.0e6,0,1\n6.0,5.0e6,1.0e6,10\n9.0,2.0e7,5.0e6,50\n"
)


def write_scenario(
    folder: Path,
    *,
    toml_extra: str = "",
    ensemble: str | None = None,
    family: str = "lp3",
    rating: str | None = RATING,
    conseq: str = CONSEQ,
    variable: str = "discharge",
    modes: str | None = None,
    name: str = "scenario.toml",
) -> Path:
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    if ensemble is None:
        rng = np.random.default_rng(4)
        rows = [
            f"{m:.6f},{s:.6f},{g:.6f}"
            for m, s, g in zip(rng.normal(2.5, 0.05, 200), rng.uniform(0.2, 0.3, 200), rng.uniform(-0.3, 0.3, 200))
        ]
        ensemble = "mean,sd,skew\n" + "\n".join(rows) + "\n"
    (folder / "ensemble.csv").write_text(ensemble)
    if rating is not None:
        (folder / "rating.csv").write_text(rating)
    (folder / "consequences.csv").write_text(conseq)
    if modes is None:
        modes = """
        [[failure_modes]]
        name = "breach"
          [[failure_modes.nodes]]
          name = "breach given stage"
          kind = "normal"
          median = 5.0
          spread = 0.5
        """
    text = f"""
    title = "test scenario"
    seed = 42
    [units]
    discharge = "m3s"
    stage = "m"
    currency = "usd"
    [hazard]
    variable = "{variable}"
    family = "{family}"
    ensemble = "ensemble.csv"
    """
    if rating is not None:
        text += """
    [rating]
    table = "rating.csv"
    """
    text = (
        textwrap.dedent(text)
        + textwrap.dedent(modes)
        + textwrap.dedent("""
    [consequences]
    table = "consequences.csv"
    """)
        + textwrap.dedent(toml_extra)
    )
    path = folder / name
    path.write_text(text)
    return path


@pytest.fixture
def scenario_factory(tmp_path):
    def make(**kw):
        return write_scenario(tmp_path / kw.pop("folder", "sc"), **kw)

    return make
