"""Consequences against peak stage: damage and life loss, given breach and given no breach.

A consequence table has a ``stage`` column and any of

* ``damage_breach_<cur>``, ``damage_no_breach_<cur>``: economic damage [currency];
* ``life_loss_breach``, ``life_loss_no_breach``: expected fatalities;
* ``population_at_risk`` with ``fatality_rate_breach`` (and optionally
  ``fatality_rate_no_breach``): life loss as population at risk times a fatality rate
  (Graham 1999 gives suggested rates by flood severity and warning time);
* ``population_at_risk`` with ``depth_velocity_breach_<m2s|ft2s>`` (depth times
  velocity of the breach flood) and no breach life-loss column: the breach fatality
  rates come from Graham's method for each exposure scenario's warning
  (:func:`with_exposure`, :mod:`riskcalc.response.life_loss`).

Exposure scenarios (:class:`~riskcalc.response.life_loss.ExposureScenario`) keep one
life-loss curve each (``life_loss_*_by_exposure``, weights ``exposure_weights``);
``life_loss_breach`` and ``life_loss_no_breach`` are their weighted means, which is
all the annualized life loss needs. The F-N curve reads the scenarios one by one.

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

import dataclasses
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..io import read_table, split_unit

__all__ = ["ConsequenceCurves", "read_consequence_table", "with_exposure", "CONSEQUENCE_FIELDS"]

#: ft²/s to m²/s.
FT2_TO_M2 = 0.3048**2

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
    population_at_risk: np.ndarray | None = None
    depth_velocity_breach: np.ndarray | None = None  # [m²/s]
    exposure_names: tuple = ()
    exposure_weights: np.ndarray | None = None
    life_loss_breach_by_exposure: np.ndarray | None = None  # (E, S)
    life_loss_no_breach_by_exposure: np.ndarray | None = None
    rate_range: tuple | None = None  # Graham: (low, high) life loss relative to the suggested rates

    @property
    def needs_rates(self) -> bool:
        """True when breach life loss is to come from Graham's rates (population and depth x velocity given)."""
        return self.depth_velocity_breach is not None and self.exposure_weights is None

    def by_exposure(self):
        """Exposure weights (E,) and life loss given breach and given no breach per scenario (E, S)."""
        if self.exposure_weights is None:
            return np.ones(1), self.life_loss_breach[None], self.life_loss_no_breach[None]
        return self.exposure_weights, self.life_loss_breach_by_exposure, self.life_loss_no_breach_by_exposure

    def at(self, h):
        """The four consequence fields at stages ``h`` (any shape), linear in stage, ends held."""
        h = np.asarray(h, float)
        return tuple(np.interp(h, self.stage, getattr(self, f)) for f in CONSEQUENCE_FIELDS)

    def scaled(self, damage: float = 1.0, life_loss: float = 1.0) -> ConsequenceCurves:
        """The curves with every damage value times ``damage`` and every life-loss value times ``life_loss``."""
        return dataclasses.replace(
            self,
            damage_breach=self.damage_breach * damage,
            damage_no_breach=self.damage_no_breach * damage,
            life_loss_breach=self.life_loss_breach * life_loss,
            life_loss_no_breach=self.life_loss_no_breach * life_loss,
            life_loss_breach_by_exposure=None
            if self.life_loss_breach_by_exposure is None
            else self.life_loss_breach_by_exposure * life_loss,
            life_loss_no_breach_by_exposure=None
            if self.life_loss_no_breach_by_exposure is None
            else self.life_loss_no_breach_by_exposure * life_loss,
        )


def with_exposure(curves: ConsequenceCurves, scenarios, rates=None, high_severity_from=float("inf")):
    """The curves with one life-loss curve per exposure scenario.

    Life loss of scenario e is its population factor times the table's life loss; where the table gives
    population at risk and depth x velocity instead of breach life loss, the breach life loss is
    population x factor x Graham's suggested rate for the row's severity and the scenario's warning
    (:func:`riskcalc.response.life_loss.graham_rates`), and :attr:`ConsequenceCurves.rate_range` holds the
    life loss at the ends of Graham's ranges relative to the suggested one (population- and
    weight-averaged over the rows and scenarios).

    Parameters
    ----------
    curves : ConsequenceCurves
    scenarios : sequence of ExposureScenario
        Weights adding up to 1; an empty sequence means one scenario of weight 1.
    rates : dict, optional
        Graham rate table replacing the default.
    high_severity_from : float
        Depth x velocity [m²/s] from which severity is high.

    References
    ----------
    .. [1] Graham, W.J. (1999). A Procedure for Estimating Loss of Life Caused by Dam Failure.
       DSO-99-06, US Bureau of Reclamation.
    """
    from .life_loss import ExposureScenario, graham_rates, severity_class

    sc = tuple(scenarios) or (ExposureScenario("all", 1.0),)
    w = np.array([s.weight for s in sc], float)
    lnb = np.stack([curves.life_loss_no_breach * s.population_factor for s in sc])
    rng = None
    if curves.depth_velocity_breach is not None:
        sev = severity_class(curves.depth_velocity_breach, high_from=high_severity_from)
        rows, lo_sum, hi_sum, mid_sum = [], 0.0, 0.0, 0.0
        for s in sc:
            if s.warning_hours is None:
                raise ValueError(
                    f"exposure scenario '{s.name}' gives no warning_hours, which fatality rates by Graham's method need"
                )
            mid, lo, hi = graham_rates(sev, s.warning_hours, s.understanding, rates)
            par = curves.population_at_risk * s.population_factor
            rows.append(par * mid)
            mid_sum += s.weight * float(par @ mid)
            lo_sum += s.weight * float(par @ lo)
            hi_sum += s.weight * float(par @ hi)
        lb = np.stack(rows)
        if mid_sum > 0:
            rng = (lo_sum / mid_sum, hi_sum / mid_sum)
    else:
        lb = np.stack([curves.life_loss_breach * s.population_factor for s in sc])
    return dataclasses.replace(
        curves,
        life_loss_breach=w @ lb,
        life_loss_no_breach=w @ lnb,
        exposure_names=tuple(s.name for s in sc),
        exposure_weights=w,
        life_loss_breach_by_exposure=lb,
        life_loss_no_breach_by_exposure=lnb,
        rate_range=rng,
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
        "depth_velocity_breach",
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
        if name == "depth_velocity_breach" and unit not in ("m2s", "ft2s"):
            raise InputError(
                f"unit '{unit}' of depth x velocity is not m2s or ft2s", table.path, row=table.header_row, column=c
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
    table.require_increasing(cols["stage"], h, what=what)
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
    dv = None
    if "depth_velocity_breach" in cols:
        c = cols["depth_velocity_breach"]
        if "population_at_risk" not in vals:
            raise InputError(
                "depth_velocity_breach needs a population_at_risk column", table.path, row=table.header_row, column=c
            )
        if "life_loss_breach" in vals:
            raise InputError(
                "give breach life loss (life_loss_breach or fatality_rate_breach) or depth_velocity_breach for "
                "Graham's rates, not both",
                table.path,
                row=table.header_row,
                column=c,
            )
        dv = table.numbers(c, nonnegative=True, what="a depth x velocity >= 0")
        if split_unit(c, ("depth_velocity_breach",))[1] == "ft2s":
            dv = dv * FT2_TO_M2
    zeros = np.zeros(len(h))
    cur = None
    for name, c in cols.items():
        if name.startswith("damage"):
            cur = split_unit(c, (name,))[1] or currency
    return ConsequenceCurves(
        stage=h,
        **{f: vals.get(f, zeros) for f in CONSEQUENCE_FIELDS},
        currency=cur or currency,
        source=str(path),
        population_at_risk=vals.get("population_at_risk"),
        depth_velocity_breach=dv,
    )
