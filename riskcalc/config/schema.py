"""The scenario schema: every section's fields, their types, defaults and allowed values, and one validator.

Each table of a scenario file is declared once, in :data:`SCHEMA`, as a mapping
of key to :class:`Field`. :func:`validate` walks a table against its
declaration and returns the values with defaults filled, or raises an
:class:`~riskcalc.errors.InputError` naming the file and the key and saying what
was expected. Rules that tie several fields together (``aep_min < aep_max``,
unique names, a future year after the base year, ...) are small explicit
checks beside the readers that call :func:`validate`; no other list of allowed
keys exists.

Messages read, for example::

    scenario.toml, key 'grid.spacing': unknown key; expected one of aep_max, aep_min, points, rule
    scenario.toml, key 'seed': expected an integer, got text 'forty-two'
    scenario.toml, key 'grid.points': 3 is outside 50 to 200000; expected a number of grid points
    scenario.toml, key 'units.stage': 'yd' is not m or ft
"""

from __future__ import annotations

import copy
import math
import numbers
from dataclasses import dataclass

from ..errors import InputError
from ..decision.guidelines import DEFAULT_GUIDELINES, MEASURES


DISCHARGE_UNITS = ("m3s", "cfs")


STAGE_UNITS = ("m", "ft")


class _Marker:
    def __init__(self, name):
        self.name = name

    def __repr__(self):
        return self.name

    def __deepcopy__(self, memo):
        return self


#: Default of a field that must be given.
REQUIRED = _Marker("REQUIRED")

#: Default of an optional field that is left out of the result when it is not given.
OMIT = _Marker("OMIT")


@dataclass(frozen=True)
class Field:
    """The declaration of one key of a scenario table.

    Parameters
    ----------
    type : type
        ``str``, ``int``, ``float``, ``bool``, ``dict`` (a table) or ``list``.
        An integer is accepted for a ``float``; ``true``/``false`` is never a number.
    default : object
        Value when the key is absent; :data:`REQUIRED` (must be given), :data:`OMIT`
        (left out of the result) or ``None`` (no value; a ``None`` given from
        Python counts as absent).
    expect : str
        What is expected, one line, e.g. ``"a probability"``; ends the message of
        a value that is refused.
    choices : tuple
        Allowed values (for a list: of each element).
    low, high : float, optional
        Bounds of a number; ``low_open`` / ``high_open`` exclude the bound itself.
    allow_inf : bool
        Accept ``inf`` for a ``float`` (``nan`` is always refused).
    pow2, even : bool
        The integer must be a power of two (>= 2) / even.
    nonblank : bool
        Text must not be empty or blank.
    items : Field, optional
        For a list of values: the declaration of each element.
    table : str, optional
        The :data:`SCHEMA` section of a nested table (``dict``) or of each element
        of a list of tables (``list``), followed by :func:`validate` with ``deep=True``.
    values : Field, optional
        For a table with free keys (e.g. group names): the declaration of each value.
    min_items : int
        Least number of elements of a list.
    index_base : int
        Number of the first list element in messages (``key[1]`` by default).
    one_or_many : bool
        For a list of values: a single value is taken as a list of one.
    """

    type: type
    default: object = REQUIRED
    expect: str = ""
    choices: tuple = ()
    low: float | None = None
    high: float | None = None
    low_open: bool = False
    high_open: bool = False
    allow_inf: bool = False
    pow2: bool = False
    even: bool = False
    nonblank: bool = False
    items: Field | None = None
    table: str | None = None
    values: Field | None = None
    min_items: int = 0
    index_base: int = 1
    one_or_many: bool = False


_PROB = "a probability"
_TABLE_FILE = "the name of a .csv or .xlsx table"
_SD = "a standard deviation >= 0"
_NAMES = Field(str, nonblank=True, expect="a factor name")


#: Every table of a scenario: section name -> {key: Field}. ``""`` is the top level.
SCHEMA: dict[str, dict[str, Field]] = {
    "": {
        "title": Field(str, "untitled scenario"),
        "structure": Field(
            str,
            "unspecified",
            choices=("dam", "levee", "unspecified"),
            expect="dam, levee or unspecified (chooses the default reference lines)",
        ),
        "description": Field(str, ""),
        "seed": Field(int, 20240601, low=0, expect="an integer >= 0"),
        "base": Field(str, "", expect="the file name of another scenario"),
        "units": Field(dict, {}, table="units"),
        "hazard": Field(dict, REQUIRED, table="hazard"),
        "grid": Field(dict, {}, table="grid"),
        "rating": Field(dict, {}, table="rating"),
        "failure_modes": Field(
            list, REQUIRED, table="failure_mode", min_items=1, expect="at least one [[failure_modes]] entry"
        ),
        "consequences": Field(dict, REQUIRED, table="consequences"),
        "consequence_tables": Field(
            dict,
            {},
            values=Field(str, nonblank=True, expect=_TABLE_FILE),
            expect="a table of name = consequence table file",
        ),
        "exposure": Field(list, [], table="exposure", expect="a list of tables ([[exposure]])"),
        "life_loss": Field(dict, {}, table="life_loss"),
        "loadings": Field(list, [], table="loading", expect="a list of tables ([[loadings]])"),
        "individual_risk": Field(list, [], table="individual_risk", expect="a list of tables ([[individual_risk]])"),
        "uncertainty": Field(dict, {}, table="uncertainty"),
        "checks": Field(dict, {}, table="checks"),
        "outputs": Field(dict, {}, table="outputs"),
        "guidelines": Field(dict, {}, table="guidelines"),
        "sensitivity": Field(dict, {}, table="sensitivity"),
        "alternatives": Field(list, [], table="alternative"),
        "economics": Field(dict, {}, table="economics"),
    },
    "units": {
        "discharge": Field(str, "m3s", choices=DISCHARGE_UNITS),
        "stage": Field(str, "m", choices=STAGE_UNITS),
        "currency": Field(str, "usd", nonblank=True, expect="a currency code such as usd or eur"),
    },
    "hazard": {
        "variable": Field(str, "discharge", choices=("discharge", "stage")),
        # family and ensemble are required unless a fit table gives them (checked in config/scenario.py:read_hazard)
        "family": Field(str, OMIT, expect="a frequency family or table"),
        "ensemble": Field(str, OMIT, nonblank=True, expect=_TABLE_FILE),
        "fit": Field(dict, OMIT, table="hazard_fit"),
        "credible_level": Field(float, 0.9, low=0, high=1, low_open=True, high_open=True, expect=_PROB),
        "mode": Field(dict, {}, expect="a table of the family's parameters"),  # keys depend on the family
    },
    "hazard_fit": {
        "peaks": Field(str, REQUIRED, nonblank=True, expect=_TABLE_FILE),
        "thresholds": Field(str, OMIT, nonblank=True, expect=_TABLE_FILE),
        "family": Field(str, REQUIRED, choices=("lp3", "gev", "gumbel", "lognormal", "normal")),
        "draws": Field(int, 4000, low=100, high=1_000_000, expect="a number of posterior draws"),
        "seed": Field(int, None, low=0, expect="an integer >= 0"),  # default: the scenario's seed
        "shape_prior": Field(str, "geophysical", choices=("geophysical", "flat")),
        "regional_skew": Field(float, None, low=-3, high=3, low_open=True, high_open=True, expect="a skew"),
        "regional_skew_mse": Field(float, None, low=0, low_open=True, expect="a mean squared error > 0"),
    },
    "grid": {
        "points": Field(int, 2000, low=50, high=200_000, expect="a number of grid points"),
        "aep_max": Field(float, 0.999, low=0, high=1, low_open=True, high_open=True, expect=_PROB),
        "aep_min": Field(float, 1e-7, low=0, high=1, low_open=True, high_open=True, expect=_PROB),
        "rule": Field(str, "midpoint", choices=("midpoint", "trapezoid")),
        # without `points` the grid is chosen adaptively (riskcalc.risk.grid_error.choose_points)
        "target_error": Field(
            float, 1e-3, low=0, high=0.1, low_open=True, expect="a share of each headline figure in (0, 0.1]"
        ),
        "min_points": Field(int, 250, low=50, high=200_000, expect="a number of grid points"),
        "max_points": Field(int, 16_000, low=50, high=200_000, expect="a number of grid points"),
    },
    "rating": {
        "table": Field(str, REQUIRED, nonblank=True, expect=_TABLE_FILE),
        "extrapolation": Field(str, "extend", choices=("refuse", "extend")),
        "natural_sd": Field(float, 0.0, low=0, expect=_SD),
        "knowledge_sd": Field(float, 0.0, low=0, expect=_SD),
    },
    "failure_mode": {
        "name": Field(str, REQUIRED, expect="a failure-mode name"),
        "shift_sd": Field(float, 0.0, low=0, expect=_SD),
        "spread_range": Field(
            list, [], items=Field(float, expect="a spread factor"), expect="[low, high] with 0 < low <= high"
        ),
        "nodes": Field(list, REQUIRED, table="node", min_items=1, expect="at least one [[failure_modes.nodes]] entry"),
        "consequences": Field(str, "", expect="the name of a [consequence_tables] entry"),
    },
    "exposure": {
        "name": Field(str, REQUIRED, nonblank=True, expect="the exposure scenario's name"),
        "weight": Field(float, REQUIRED, low=0, high=1, low_open=True, expect="a probability in (0, 1]"),
        "population_factor": Field(float, 1.0, low=0, expect="a factor >= 0 on the population at risk"),
        "warning_hours": Field(float, None, low=0, expect="a warning time in hours >= 0"),
        "understanding": Field(str, "", choices=("", "vague", "precise")),
    },
    "life_loss": {
        "warning_hours": Field(float, None, low=0, expect="a warning time in hours >= 0"),
        "understanding": Field(str, "vague", choices=("vague", "precise")),
        "high_severity_from_m2s": Field(
            float, math.inf, low=0, low_open=True, allow_inf=True, expect="a depth x velocity in m2/s (or inf)"
        ),
        "rate_uncertainty": Field(str, "graham_range", choices=("graham_range", "none")),
    },
    "loading": {
        "name": Field(str, REQUIRED, nonblank=True, expect="the loading's name"),
        "kind": Field(str, REQUIRED, choices=("flood", "seismic", "static")),
        "scenario": Field(str, "", expect="the file name of a scenario (a flood loading)"),
        "hazard": Field(dict, {}, table="seismic_hazard"),
        "pool": Field(dict, {}, table="pool"),
        "consequences": Field(str, "", expect="the name of a [consequence_tables] entry"),
        "draws": Field(int, 0, low=0, high=1_000_000, expect="a number of draws (0: as many as the flood loading)"),
        "failure_modes": Field(list, [], table="loading_failure_mode", expect="a list of tables"),
    },
    "seismic_hazard": {
        "table": Field(str, REQUIRED, nonblank=True, expect=_TABLE_FILE),
        "weights": Field(
            dict,
            REQUIRED,
            values=Field(float, low=0, high=1, low_open=True, expect="a weight in (0, 1]"),
            expect="a table of curve column = weight",
        ),
        "mode": Field(str, "", expect="the column of the most likely curve (default: the largest weight)"),
        "points": Field(int, 400, low=20, high=100_000, expect="a number of ground-motion grid points"),
    },
    "pool": {
        "table": Field(str, "", expect=_TABLE_FILE),
        "stage": Field(float, None, expect="a reservoir level in the scenario's stage unit"),
        "bins": Field(int, 12, low=1, high=200, expect="a number of pool-level bins"),
    },
    "loading_failure_mode": {
        "name": Field(str, REQUIRED, nonblank=True, expect="a failure-mode name"),
        "consequences": Field(str, "", expect="the name of a [consequence_tables] entry"),
        "median": Field(float, None, low=0, low_open=True, expect="a median ground motion > 0"),
        "beta": Field(float, None, low=0, low_open=True, expect="a logarithmic standard deviation > 0"),
        "table": Field(str, "", expect=_TABLE_FILE),
        "median_log_sd": Field(float, 0.0, low=0, expect="a logarithmic standard deviation >= 0"),
        "annual_probability": Field(dict, {}, table="annual_probability"),
    },
    "annual_probability": {
        "distribution": Field(str, "fixed", choices=("fixed", "lognormal", "triangular", "loguniform")),
        "value": Field(float, None, low=0, high=1, low_open=True, expect=_PROB),
        "median": Field(float, None, low=0, high=1, low_open=True, expect=_PROB),
        "beta": Field(float, None, low=0, expect="a logarithmic standard deviation >= 0"),
        "low": Field(float, None, low=0, high=1, expect=_PROB),
        "mode": Field(float, None, low=0, high=1, expect=_PROB),
        "high": Field(float, None, low=0, high=1, low_open=True, expect=_PROB),
    },
    "individual_risk": {
        "name": Field(str, REQUIRED, nonblank=True, expect="the location or group's name"),
        "exposure": Field(
            float, 1.0, low=0, high=1, expect="the fraction of time the most exposed person is there, in [0, 1]"
        ),
        "fatality_rate": Field(float, REQUIRED, low=0, high=1, expect="a fatality rate given failure, in [0, 1]"),
        "failure_modes": Field(
            list,
            [],
            items=Field(str, nonblank=True, expect="a failure-mode name"),
            expect="a list of failure-mode names (default: all)",
        ),
    },
    "node": {
        "name": Field(str, "node"),
        "kind": Field(str, REQUIRED, choices=("normal", "lognormal", "table")),
        "median": Field(float, math.nan),  # required for normal and lognormal nodes (checked when built)
        "spread": Field(float, math.nan),
        "datum": Field(float, 0.0),
        "table": Field(str, "", expect=_TABLE_FILE),
    },
    "consequences": {
        "table": Field(str, REQUIRED, nonblank=True, expect=_TABLE_FILE),
        "damage_multiplier": Field(dict, {}, table="multiplier"),
        "life_loss_multiplier": Field(dict, {}, table="multiplier"),
    },
    "multiplier": {
        "distribution": Field(str, "fixed", choices=("fixed", "triangular", "lognormal")),
        "low": Field(float, 1.0),
        "mode": Field(float, 1.0),
        "high": Field(float, 1.0),
        "median": Field(float, 1.0),
        "beta": Field(float, 0.0),
    },
    "uncertainty": {
        "draws_per_realization": Field(int, 1, low=1, high=10_000, expect="a number of response draws per realization"),
        "hermite_nodes": Field(int, 16, low=2, high=64, expect="a number of Gauss-Hermite quadrature nodes"),
        "workers": Field(int, 0, low=0, expect="0 (the machine's cores) or a number of threads"),
    },
    "checks": {
        "design_aep": Field(float, 0.01, low=0, high=1, low_open=True, high_open=True, expect=_PROB),
        "years": Field(int, 50, low=1, expect="a number of years >= 1"),
        "crest_stage": Field(
            float, None, expect="the stage of the crest or top of levee, in the scenario's stage unit"
        ),
    },
    "outputs": {
        "figures": Field(bool, True),
        "memo": Field(bool, True),
    },
    # -- [sensitivity] -------------------------------------------------------------------------------
    "sensitivity": {
        "enabled": Field(bool, False),
        "n": Field(int, 1024, low=16, pow2=True, expect="a power of two >= 16, e.g. 1024"),
        "seed": Field(int, None, low=1, expect="an integer >= 1"),  # default: the scenario's seed
        "second_order": Field(bool, False),
        "target_width": Field(
            float,
            None,
            low=0,
            high=1,
            low_open=True,
            high_open=True,
            expect="a confidence half-width in (0, 1), e.g. 0.05",
        ),
        "n_max": Field(int, None, low=16, pow2=True, expect="a power of two >= n"),  # default: max(16384, n)
        "n_resamples": Field(int, 100, low=10, high=10_000, expect="an integer from 10 to 10000"),
        "conf_level": Field(
            float, 0.95, low=0, high=1, low_open=True, high_open=True, expect="a level in (0, 1), e.g. 0.95"
        ),
        "groups": Field(
            dict,
            {},
            values=Field(list, items=_NAMES, min_items=1, expect="a non-empty list of factor names"),
            expect="a table of group = [factor names]",
        ),
        "include": Field(list, [], items=_NAMES, expect="a list of factor names"),
        "exclude": Field(list, [], items=_NAMES, expect="a list of factor names"),
        "morris": Field(bool, False),
        "morris_trajectories": Field(int, 20, low=4, high=1000, expect="an integer from 4 to 1000"),
        "morris_levels": Field(int, 4, low=2, high=20, even=True, expect="an even integer from 2 to 20"),
        "gap_samples": Field(int, 1024, low=64, high=65536, pow2=True, expect="a power of two from 64 to 65536"),
        # grow n in powers of two until every half-width is below target_width (default 0.1) or n_max
        "grow": Field(bool, True),
        "estimator": Field(str, "janon", choices=("janon", "saltelli")),
        # Sobol on the grid of every second node when its grid error is below this share of each headline
        "grid_target_error": Field(
            float, 0.01, low=0, high=0.1, low_open=True, expect="a share of each headline figure in (0, 0.1]"
        ),
    },
    # -- [guidelines] (list entries are numbered from 0) ---------------------------------------------
    "guidelines": {
        "name": Field(str, "custom", nonblank=True, expect="a non-empty text (the set's title)"),
        "source": Field(str, "user configuration", nonblank=True, expect="a non-empty text (the set's citation)"),
        "include": Field(
            list,
            [],
            items=Field(str, choices=tuple(DEFAULT_GUIDELINES)),
            index_base=0,
            one_or_many=True,
            expect="a list of default set names",
        ),
        "fn_lines": Field(
            list, [], table="fn_line", index_base=0, expect="a list of tables (TOML [[...]] array of tables)"
        ),
        "life_loss_lines": Field(
            list, [], table="life_loss_line", index_base=0, expect="a list of tables (TOML [[...]] array of tables)"
        ),
        "probability_lines": Field(
            list, [], table="probability_line", index_base=0, expect="a list of tables (TOML [[...]] array of tables)"
        ),
    },
    "fn_line": {
        "name": Field(str, REQUIRED, nonblank=True, expect="a non-empty text (the line's label)"),
        "source": Field(str, REQUIRED, nonblank=True, expect="the citation of the policy that sets the line"),
        "anchor_n": Field(float, REQUIRED, low=0, low_open=True, expect="a positive number of lives"),
        "anchor_f": Field(
            float, REQUIRED, low=0, high=1, low_open=True, expect="a positive annual probability, at most 1"
        ),
        "slope": Field(float, -1.0, high=0, expect="a number <= 0 (a falling line)"),
        "n_min": Field(float, 1.0, low=0, low_open=True, expect="a positive number of lives"),
        "n_max": Field(
            float, math.inf, low=0, low_open=True, allow_inf=True, expect="a positive number of lives (or inf)"
        ),
    },
    "life_loss_line": {
        "name": Field(str, REQUIRED, nonblank=True, expect="a non-empty text (the line's label)"),
        "source": Field(str, REQUIRED, nonblank=True, expect="the citation of the policy that sets the line"),
        "value": Field(float, REQUIRED, low=0, low_open=True, expect="a positive annualized life loss [lives/yr]"),
        "n_min": Field(float, 0.0, low=0, expect="a number of lives >= 0"),
        "n_max": Field(
            float, math.inf, low=0, low_open=True, allow_inf=True, expect="a positive number of lives (or inf)"
        ),
    },
    "probability_line": {
        "name": Field(str, REQUIRED, nonblank=True, expect="a non-empty text (the line's label)"),
        "source": Field(str, REQUIRED, nonblank=True, expect="the citation of the policy that sets the line"),
        "value": Field(
            float, REQUIRED, low=0, high=1, low_open=True, expect="a positive annual probability, at most 1"
        ),
        "measure": Field(str, "annual_failure_probability", choices=MEASURES),
    },
    # -- [economics] and [[alternatives]] ------------------------------------------------------------
    "economics": {
        "rate": Field(
            float, REQUIRED, low=0, high=1, high_open=True, expect="the discount rate as a fraction, e.g. 0.03"
        ),
        "period_years": Field(int, 50, low=1, expect="a period of analysis in years >= 1"),
        "base_year": Field(int, None, low=0, expect="the calendar year of the first year of the period"),
        "future": Field(dict, OMIT, table="economics_future"),
    },
    "economics_future": {
        "year": Field(int, REQUIRED, expect="the calendar year of the future condition"),
        "hazard": Field(dict, OMIT, expect="a table of [hazard] settings, merged over the base's"),
        "rating": Field(dict, OMIT, expect="a table of [rating] settings, merged over the base's"),
        "failure_modes": Field(list, OMIT, expect="a list of tables ([[economics.future.failure_modes]])"),
        "consequences": Field(dict, OMIT, expect="a table of [consequences] settings, merged over the base's"),
        "damage_factor": Field(float, 1.0, low=0, low_open=True, expect="a growth factor on damage > 0"),
        "life_loss_factor": Field(float, 1.0, low=0, low_open=True, expect="a growth factor on life loss > 0"),
    },
    "alternative": {
        "name": Field(str, REQUIRED, nonblank=True, expect="the alternative's name"),
        "description": Field(str, ""),
        "first_cost": Field(float, REQUIRED, low=0, expect="the construction cost in the scenario's currency, >= 0"),
        "annual_om": Field(float, 0.0, low=0, expect="the annual operation and maintenance cost, >= 0"),
        "construction_months": Field(int, 0, low=0, expect="a number of months >= 0"),
        "future": Field(dict, {}, table="alternative_future"),
        # overrides of the base, validated after merging as the same sections of the base
        "rating": Field(dict, OMIT, expect="a table of [rating] settings, merged over the base's"),
        "failure_modes": Field(list, OMIT, expect="a list of tables ([[alternatives.failure_modes]])"),
        "consequences": Field(dict, OMIT, expect="a table of [consequences] settings, merged over the base's"),
        "uncertainty": Field(dict, OMIT, expect="a table of [uncertainty] settings, merged over the base's"),
    },
    "alternative_future": {
        "rating": Field(dict, OMIT, expect="a table of [rating] settings"),
        "failure_modes": Field(list, OMIT, expect="a list of tables ([[alternatives.future.failure_modes]])"),
        "consequences": Field(dict, OMIT, expect="a table of [consequences] settings"),
    },
}


# --------------------------------------------------------------------------
# The validator
# --------------------------------------------------------------------------
def validate(section: str, d, file, prefix: str = "", *, deep: bool = True) -> dict:
    """Validate one table against ``SCHEMA[section]``.

    Parameters
    ----------
    section : str
        A key of :data:`SCHEMA`.
    d : dict
        The table as read from TOML.
    file : path
        The scenario file, for messages.
    prefix : str
        Key path of the table in messages, with its trailing dot, e.g. ``"grid."``.
    deep : bool
        Also validate nested tables and lists of tables that declare a ``table``
        (their values are returned normalized); with False they are only checked
        to be a table or a list and returned as given.

    Returns
    -------
    dict
        Every declared key with its value (ints made floats where a number is
        expected) or its default; :data:`OMIT` fields that are absent are left out.

    Raises
    ------
    InputError
        On the first unknown key, missing required key or refused value, naming
        ``prefix + key``.
    """
    spec = SCHEMA[section]
    if not isinstance(d, dict):
        raise InputError(
            f"expected a table of settings, got {_describe(d)}"[:160], file, key=prefix.rstrip(".") or section or None
        )
    for k in d:
        if k not in spec:
            raise InputError(f"unknown key; expected one of {', '.join(sorted(spec))}", file, key=prefix + str(k))
    out = {}
    for k, f in spec.items():
        v = d.get(k)
        if k not in d or (v is None and f.default is None):
            if f.default is REQUIRED:
                raise InputError(
                    "missing required key" + (f"; expected {f.expect}" if f.expect else ""), file, key=prefix + k
                )
            if f.default is not OMIT:
                out[k] = copy.deepcopy(f.default)
            continue
        out[k] = check_value(f, v, file, prefix + k, deep=deep)
    return out


def check_section(section: str, d, file, prefix: str):
    """Validate keys, types and values of one table against ``SCHEMA[section]``; returns a dict with defaults filled.

    Nested tables and lists of tables are checked to be a table or a list only
    (their own sections are validated by whoever builds them), so
    ``check_section("failure_mode", ...)`` returns the ``nodes`` as given.
    """
    return validate(section, d, file, prefix, deep=False)


def check_value(f: Field, v, file, key: str, *, deep: bool = True):
    """Validate one value against its :class:`Field`; returns it normalized (see :func:`validate`)."""
    if f.one_or_many and f.items is not None and not isinstance(v, list) and _is(v, f.items.type):
        v = [v]
    if not _is(v, f.type):
        what = "a list of tables ([[...]] entries)" if f.type is list and f.table else _typename(f.type)
        raise InputError(f"expected {what}, got {_describe(v)}"[:160], file, key=key)
    if f.type is float:
        v = float(v)
        if math.isnan(v) or (math.isinf(v) and not f.allow_inf):
            raise InputError(f"{v} is not finite", file, key=key)
    elif f.type is int:
        v = int(v)
    if f.type is str and f.nonblank and not v.strip():
        raise InputError("is empty" + (f"; expected {f.expect}" if f.expect else ""), file, key=key)
    if f.choices and v not in f.choices:
        raise InputError(
            f"{_show(v)} is not {_alternatives(f.choices)}" + (f"; expected {f.expect}" if f.expect else ""),
            file,
            key=key,
        )
    wrong = _out_of_range(f, v)
    if wrong:
        raise InputError(f"{_show(v)} {wrong}" + (f"; expected {f.expect}" if f.expect else ""), file, key=key)
    if f.type is list:
        if len(v) < f.min_items:
            raise InputError("is empty" + (f"; expected {f.expect}" if f.expect else ""), file, key=key)
        if f.items is not None:
            v = [check_value(f.items, x, file, f"{key}[{i + f.index_base}]", deep=deep) for i, x in enumerate(v)]
        elif f.table is not None and deep:
            v = [validate(f.table, x, file, f"{key}[{i + f.index_base}].") for i, x in enumerate(v)]
    elif f.type is dict and deep:
        if f.table is not None:
            v = validate(f.table, v, file, key + ".")
        elif f.values is not None:
            v = {str(k): check_value(f.values, x, file, f"{key}.{k}") for k, x in v.items()}
    return v


def _is(v, typ) -> bool:
    if typ is float:
        return isinstance(v, numbers.Real) and not isinstance(v, bool)
    if typ is int:
        return isinstance(v, numbers.Integral) and not isinstance(v, bool)
    return isinstance(v, typ)


def _out_of_range(f: Field, v) -> str:
    """What is wrong with a number ("is outside (0, 1)", "is negative", ...), or "" when it is fine."""
    if f.type not in (int, float):
        return ""
    lo_bad = f.low is not None and (v <= f.low if f.low_open else v < f.low)
    hi_bad = f.high is not None and (v >= f.high if f.high_open else v > f.high)
    if lo_bad or hi_bad:
        if f.low is not None and f.high is not None:
            if f.type is int and not f.low_open and not f.high_open:
                return f"is outside {_num(f.low)} to {_num(f.high)}"
            return f"is outside {'(' if f.low_open else '['}{_num(f.low)}, {_num(f.high)}{')' if f.high_open else ']'}"
        if lo_bad:
            if f.low_open:
                return f"is not above {_num(f.low)}"
            return "is negative" if f.low == 0 else f"is below {_num(f.low)}"
        return f"is not below {_num(f.high)}" if f.high_open else f"is above {_num(f.high)}"
    if f.pow2 and not (v >= 2 and not v & (v - 1)):
        return "is not a power of two"
    if f.even and v % 2:
        return "is not even"
    return ""


def _num(b) -> str:
    return str(int(b)) if float(b).is_integer() else f"{b:g}"


def _show(v) -> str:
    return repr(v) if isinstance(v, str) else str(v)


def _alternatives(choices) -> str:
    c = [str(x) for x in choices]
    return c[0] if len(c) == 1 else f"{', '.join(c[:-1])} or {c[-1]}"


def _typename(t):
    return {
        str: "text",
        int: "an integer",
        float: "a number",
        bool: "true or false",
        dict: "a table",
        list: "a list",
    }.get(t, getattr(t, "__name__", str(t)))


def _describe(v) -> str:
    """A value as it reads in a message: its kind and its repr, e.g. ``text 'five'``."""
    kind = next((_typename(t) for t in (bool, int, float, str, dict, list) if _is(v, t)), type(v).__name__)
    return f"{kind} {v!r}"


# --------------------------------------------------------------------------
# Small helpers shared by the readers
# --------------------------------------------------------------------------
def _file_name(v, file, key):
    """Refuse an empty table path (it would otherwise resolve to the scenario's folder)."""
    if not str(v).strip():
        raise InputError(f"is empty; expected {_TABLE_FILE}", file, key=key)
    return v


def _mode_key(name: str) -> str:
    """A failure-mode name as it appears in table columns and summary keys (spaces -> '_', any case)."""
    return "_".join(str(name).split()).lower()


def _probability(v, file, key, open_=True):
    if not (0 < v < 1 if open_ else 0 <= v <= 1):
        raise InputError(f"{v} is outside {'(0, 1)' if open_ else '[0, 1]'}; expected a probability", file, key=key)
