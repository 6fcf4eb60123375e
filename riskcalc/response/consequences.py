"""Consequences against peak stage: damage and life loss, given breach and given no breach.

A consequence table has a ``stage`` column and any of

* ``damage_breach_<cur>``, ``damage_no_breach_<cur>``: economic damage [currency];
* ``life_loss_breach``, ``life_loss_no_breach``: expected fatalities;
* ``population_at_risk`` with ``fatality_rate_breach`` (and optionally
  ``fatality_rate_no_breach``): life loss as population at risk times a fatality rate
  (Graham 1999 gives suggested rates by flood severity and warning time).

Values are interpolated linearly in stage and held constant beyond the table's
ends (documented; a table should start at a stage with no damage). Missing
columns are zero. Uncertainty enters through damage and life-loss factors
declared in the chain's registry of uncertain inputs
(:func:`riskcalc.response.uncertain.consequence_factor`).

References
----------
.. [1] Graham, W.J. (1999). A Procedure for Estimating Loss of Life Caused by
   Dam Failure. DSO-99-06, US Bureau of Reclamation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..io import read_table, split_unit

__all__ = ["ConsequenceCurves", "read_consequence_table", "CONSEQUENCE_FIELDS"]

CONSEQUENCE_FIELDS = ("damage_breach", "damage_no_breach", "life_loss_breach", "life_loss_no_breach")


@dataclass(frozen=True, eq=False)
class ConsequenceCurves:
    """Consequences tabulated on stage; each field an array on ``stage`` (zeros where not given)."""

    stage: np.ndarray
    damage_breach: np.ndarray
    damage_no_breach: np.ndarray
    life_loss_breach: np.ndarray
    life_loss_no_breach: np.ndarray
    currency: str | None = None
    source: str | None = None

    def at(self, h):
        """The four consequence fields at stages ``h`` (any shape), linear in stage, ends held."""
        h = np.asarray(h, float)
        return tuple(np.interp(h, self.stage, getattr(self, f)) for f in CONSEQUENCE_FIELDS)

    def scaled(self, damage: float = 1.0, life_loss: float = 1.0) -> ConsequenceCurves:
        """The curves with every damage value times ``damage`` and every life-loss value times ``life_loss``."""
        return ConsequenceCurves(
            self.stage,
            self.damage_breach * damage,
            self.damage_no_breach * damage,
            self.life_loss_breach * life_loss,
            self.life_loss_no_breach * life_loss,
            currency=self.currency,
            source=self.source,
        )


def read_consequence_table(path, *, stage_unit=None, currency=None, what="consequence table"):
    """Read a consequence table (see the module docstring for its columns).

    Raises
    ------
    InputError
        Unknown columns, units that do not match the scenario, negative damage or life loss,
        fatality rates outside [0, 1], stages that do not increase, no consequence column at all.
    """
    table = read_table(path, what=what)
    known = (
        "stage",
        "damage_breach",
        "damage_no_breach",
        "life_loss_breach",
        "life_loss_no_breach",
        "population_at_risk",
        "fatality_rate_breach",
        "fatality_rate_no_breach",
    )
    cols = {}
    for c in table.columns:
        # longest names first so damage_no_breach is not read as damage_... with unit 'no_breach'
        s = None
        for k in sorted(known, key=len, reverse=True):
            s = split_unit(c, (k,))
            if s is not None:
                break
        if s is None:
            raise InputError(
                f"unknown column '{c}' in the {what}; expected stage and any of {', '.join(known[1:])}",
                table.path,
                row=table.header_row,
                column=c,
            )
        name, unit = s
        if name == "stage" and unit is not None and stage_unit is not None and unit != stage_unit:
            raise InputError(
                f"unit '{unit}' does not match the scenario's stage unit '{stage_unit}'",
                table.path,
                row=table.header_row,
                column=c,
            )
        if name.startswith("damage") and unit is not None and currency is not None and unit != currency:
            raise InputError(
                f"currency '{unit}' does not match the scenario's currency '{currency}'",
                table.path,
                row=table.header_row,
                column=c,
            )
        if name in cols:
            raise InputError(f"two {name} columns", table.path, row=table.header_row, column=c)
        cols[name] = c
    if "stage" not in cols:
        raise InputError(f"missing column 'stage' in the {what}", table.path, row=table.header_row)
    if len(cols) == 1:
        raise InputError(
            f"the {what} has no consequence column; expected damage_breach, life_loss_breach, ...",
            table.path,
            row=table.header_row,
        )
    h = table.numbers(cols["stage"])
    for i in range(1, len(h)):
        if not h[i] > h[i - 1]:
            raise InputError(
                f"stage {h[i]:g} is not above the previous row's {h[i - 1]:g}; the {what} must increase",
                table.path,
                row=table.rows[i],
                column=cols["stage"],
            )
    vals = {}
    for name in ("damage_breach", "damage_no_breach", "life_loss_breach", "life_loss_no_breach", "population_at_risk"):
        if name in cols:
            vals[name] = table.numbers(cols[name], nonnegative=True, what="a value >= 0")
    for name in ("fatality_rate_breach", "fatality_rate_no_breach"):
        if name in cols:
            vals[name] = table.numbers(cols[name], lo=0.0, hi=1.0, what="a fatality rate in [0, 1]")
    for b in ("breach", "no_breach"):
        rate = vals.get(f"fatality_rate_{b}")
        if rate is not None:
            if "population_at_risk" not in vals:
                raise InputError(
                    f"fatality_rate_{b} needs a population_at_risk column",
                    table.path,
                    row=table.header_row,
                    column=cols[f"fatality_rate_{b}"],
                )
            if f"life_loss_{b}" in vals:
                raise InputError(
                    f"give either life_loss_{b} or population_at_risk with fatality_rate_{b}, not both",
                    table.path,
                    row=table.header_row,
                    column=cols[f"life_loss_{b}"],
                )
            vals[f"life_loss_{b}"] = vals["population_at_risk"] * rate
    zeros = np.zeros(len(h))
    cur = None
    for name, c in cols.items():
        if name.startswith("damage"):
            cur = split_unit(c, (name,))[1] or currency
    return ConsequenceCurves(
        stage=h, **{f: vals.get(f, zeros) for f in CONSEQUENCE_FIELDS}, currency=cur or currency, source=str(path)
    )
