"""Tolerable-risk reference lines for F-N and f-N charts, configurable.

Three kinds of line are held, each a frozen dataclass validated when it is
built:

:class:`FNLimitLine`
    A societal-risk limit on F-N axes: ``F(N) = anchor_f * (N / anchor_n)**slope``
    for ``n_min <= N <= n_max``, where ``F`` is the annual probability of ``N``
    or more fatalities.
:class:`LifeLossLine`
    A constant annualized life loss ``c`` [lives/yr] on f-N axes, where each
    failure is plotted at ``f`` = annual failure probability (AFP) and
    ``N = ALL / AFP``: the line ``f * N = c``, i.e. ``f = c / N``, slope -1.
:class:`ProbabilityLine`
    A constant annual probability: an annual failure probability (a
    horizontal line on f-N axes) or an individual risk, which is compared
    with a computed individual risk and not drawn on f-N axes.

:data:`DEFAULT_GUIDELINES` holds the lines of published guidance documents
as display defaults. **They are recalled, not verified against the primary
documents, and each citation says so. The governing agency's current policy,
and local codes, decide which lines apply and what they are**; give those
with :func:`from_config`.

Which defaults are drawn depends on the kind of structure
(:data:`STRUCTURE_DEFAULTS`, :func:`default_guidelines`): a dam gets the dam
sets (USACE, USBR, ANCOLD); a levee gets the USACE tolerable risk guidelines
only, which USACE applies to levees as well as dams [4]_, and not the
dam-only USBR public protection guidelines or ANCOLD unless the scenario's
``[guidelines]`` includes them; a scenario that does not say which
(``structure = "unspecified"``) gets the dam sets, and a note says the kind
was not given (:func:`structure_note`).

Checks return the ratio of the computed risk to the line (``> 1`` exceeds
the line) and where on the N axis it is taken.

References
----------
.. [1] US Army Corps of Engineers (2014). ER 1110-2-1156, Safety of Dams -
   Policy and Procedures, ch. 5 (tolerable risk guidelines).
.. [2] US Bureau of Reclamation (2011). Dam Safety Public Protection
   Guidelines.
.. [3] ANCOLD (2003). Guidelines on Risk Assessment. Australian National
   Committee on Large Dams.
.. [4] Snorteland, N.J. (2019). Rationale behind the US Army Corps of
   Engineers tolerable risk guidelines. ANCOLD conference paper (its abstract:
   the guidelines form a common basis for dam and levee safety evaluations
   and decisions). The levee values here are recalled [from memory; check the
   primary document].
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import ClassVar

import numpy as np

__all__ = [
    "MEASURES",
    "FNLimitLine",
    "LifeLossLine",
    "ProbabilityLine",
    "GuidelineSet",
    "PointCheck",
    "CurveCheck",
    "DEFAULT_GUIDELINES",
    "STRUCTURES",
    "STRUCTURE_DEFAULTS",
    "DAM_ONLY",
    "default_guidelines",
    "scenario_guideline_set",
    "structure_note",
    "from_config",
    "evaluate_line",
    "check_point",
    "check_value",
    "check_fn_curve",
]

#: What a :class:`ProbabilityLine` limits.
MEASURES = ("annual_failure_probability", "individual_risk")

UNVERIFIED = "[from memory; check the primary document]"


class _FieldError(ValueError):
    """A bad field of a line; ``field`` names it so that :func:`from_config` can name the key."""

    def __init__(self, field_name: str, message: str):
        self.field = field_name
        super().__init__(f"{field_name}: {message}")
        self.detail = message


def _text(obj, name):
    value = getattr(obj, name)
    if not isinstance(value, str) or not value.strip():
        raise _FieldError(name, f"expected a non-empty text, got {value!r}")
    object.__setattr__(obj, name, value.strip())


def _number(obj, name, *, positive=False, at_most=None, allow_inf=False, non_positive=False):
    value = getattr(obj, name)
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise _FieldError(name, f"expected a number, got {value!r}")
    x = float(value)
    if math.isnan(x) or (math.isinf(x) and not allow_inf):
        raise _FieldError(name, f"expected a finite number, got {value!r}")
    if positive and not x > 0:
        raise _FieldError(name, f"expected a positive number, got {value!r}")
    if non_positive and x > 0:
        raise _FieldError(name, f"expected a number <= 0 (a falling line), got {value!r}")
    if at_most is not None and x > at_most:
        raise _FieldError(name, f"expected a number <= {at_most:g} (an annual probability), got {value!r}")
    object.__setattr__(obj, name, x)


def _range(obj):
    _number(obj, "n_min", positive=True)
    _number(obj, "n_max", positive=True, allow_inf=True)
    if not obj.n_min < obj.n_max:
        raise _FieldError("n_max", f"expected n_max > n_min ({obj.n_min:g}), got {obj.n_max:g}")


@dataclass(frozen=True)
class FNLimitLine:
    """A societal-risk limit line on F-N axes.

    Attributes
    ----------
    name : str
        Label for legends and tables.
    source : str
        Citation of the policy that sets the line.
    anchor_n : float
        A number of fatalities the line passes through [lives], ``> 0``.
    anchor_f : float
        The annual probability of ``anchor_n`` or more fatalities on the line
        [1/yr], in ``(0, 1]``.
    slope : float, default -1
        ``d log10 F / d log10 N`` [-], ``<= 0``.
    n_min, n_max : float, default 1 and inf
        Range of N over which the line applies [lives].
    """

    name: str
    source: str
    anchor_n: float
    anchor_f: float
    slope: float = -1.0
    n_min: float = 1.0
    n_max: float = math.inf
    kind: ClassVar[str] = "fn_limit"

    def __post_init__(self):
        _text(self, "name")
        _text(self, "source")
        _number(self, "anchor_n", positive=True)
        _number(self, "anchor_f", positive=True, at_most=1.0)
        _number(self, "slope", non_positive=True)
        _range(self)


@dataclass(frozen=True)
class LifeLossLine:
    """A constant annualized life loss ``f * N = value`` on f-N axes.

    Attributes
    ----------
    name, source : str
        Label and citation.
    value : float
        Annualized life loss ``c`` [lives/yr], ``> 0``.
    n_min, n_max : float, default 0 (exclusive) and inf
        Range of N over which the line is drawn [lives]; ``n_min = 0`` means
        every ``N > 0``.
    """

    name: str
    source: str
    value: float
    n_min: float = 0.0
    n_max: float = math.inf
    kind: ClassVar[str] = "life_loss"

    def __post_init__(self):
        _text(self, "name")
        _text(self, "source")
        _number(self, "value", positive=True)
        _number(self, "n_min")
        if self.n_min < 0:
            raise _FieldError("n_min", f"expected a number >= 0, got {self.n_min!r}")
        _number(self, "n_max", positive=True, allow_inf=True)
        if not self.n_min < self.n_max:
            raise _FieldError("n_max", f"expected n_max > n_min ({self.n_min:g}), got {self.n_max:g}")


@dataclass(frozen=True)
class ProbabilityLine:
    """A constant annual probability: annual failure probability or individual risk.

    Attributes
    ----------
    name, source : str
        Label and citation.
    value : float
        The limit [1/yr], in ``(0, 1]``.
    measure : str, default ``"annual_failure_probability"``
        One of :data:`MEASURES`. An ``"individual_risk"`` line limits the
        annual probability of death of the person most at risk; it is checked
        with :func:`check_value` against a computed individual risk and is not
        drawn on f-N axes.
    """

    name: str
    source: str
    value: float
    measure: str = "annual_failure_probability"
    kind: ClassVar[str] = "probability"

    def __post_init__(self):
        _text(self, "name")
        _text(self, "source")
        _number(self, "value", positive=True, at_most=1.0)
        if self.measure not in MEASURES:
            raise _FieldError("measure", f"expected one of {', '.join(MEASURES)}, got {self.measure!r}")

    @property
    def on_chart(self) -> bool:
        """True for an annual failure probability line (drawn on f-N axes)."""
        return self.measure == "annual_failure_probability"


Line = FNLimitLine | LifeLossLine | ProbabilityLine
_LINE_TYPES = (FNLimitLine, LifeLossLine, ProbabilityLine)


@dataclass(frozen=True)
class GuidelineSet:
    """The lines of one guidance document (or of one user configuration).

    Attributes
    ----------
    name : str
        Short title.
    source : str
        Citation of the document.
    lines : tuple of lines
        :class:`FNLimitLine`, :class:`LifeLossLine` and :class:`ProbabilityLine`.
    """

    name: str
    source: str
    lines: tuple = field(default_factory=tuple)

    def __post_init__(self):
        _text(self, "name")
        _text(self, "source")
        lines = tuple(self.lines)
        for line in lines:
            if not isinstance(line, _LINE_TYPES):
                raise ValueError(f"lines: expected FNLimitLine, LifeLossLine or ProbabilityLine, got {line!r}")
        object.__setattr__(self, "lines", lines)

    @property
    def chart_lines(self) -> tuple:
        """Lines that can be drawn on F-N / f-N axes (all but individual-risk lines)."""
        return tuple(ln for ln in self.lines if not isinstance(ln, ProbabilityLine) or ln.on_chart)


# --------------------------------------------------------------------------
# Defaults (display only; the governing agency's current policy applies)
# --------------------------------------------------------------------------
_USACE = (
    f"US Army Corps of Engineers (2014), ER 1110-2-1156, Safety of Dams - Policy and Procedures, ch. 5 {UNVERIFIED}"
)
_USBR = f"US Bureau of Reclamation (2011), Dam Safety Public Protection Guidelines {UNVERIFIED}"
_ANCOLD = f"ANCOLD (2003), Guidelines on Risk Assessment {UNVERIFIED}"
_USACE_LEVEE = (
    "US Army Corps of Engineers, levee safety policy and procedures: the tolerable risk guidelines "
    f"of ER 1110-2-1156 (2014) ch. 5 as applied to levees {UNVERIFIED}"
)

#: Default guideline sets, keyed by a short identifier. Recalled values, not
#: verified here: check the primary documents, and use the governing agency's
#: current policy.
DEFAULT_GUIDELINES: Mapping[str, GuidelineSet] = MappingProxyType(
    {
        "usace_2014": GuidelineSet(
            name="USACE tolerable risk guidelines (2014)",
            source=_USACE,
            lines=(
                ProbabilityLine("USACE individual incremental risk", _USACE, 1e-4, measure="individual_risk"),
                FNLimitLine(
                    "USACE societal incremental risk limit",
                    _USACE,
                    anchor_n=1.0,
                    anchor_f=1e-3,
                    slope=-1.0,
                    n_min=1.0,
                    n_max=1000.0,
                ),
            ),
        ),
        "usbr_2011": GuidelineSet(
            name="USBR public protection guidelines (2011)",
            source=_USBR,
            lines=(
                ProbabilityLine("USBR annual failure probability", _USBR, 1e-4),
                LifeLossLine("USBR annualized life loss 0.001", _USBR, 1e-3),
                LifeLossLine("USBR annualized life loss 0.01", _USBR, 1e-2),
            ),
        ),
        "ancold_2003": GuidelineSet(
            name="ANCOLD guidelines on risk assessment (2003)",
            source=_ANCOLD,
            lines=(
                ProbabilityLine("ANCOLD individual risk, existing dams", _ANCOLD, 1e-4, measure="individual_risk"),
                ProbabilityLine("ANCOLD individual risk, new dams", _ANCOLD, 1e-5, measure="individual_risk"),
                FNLimitLine(
                    "ANCOLD societal risk limit, existing dams",
                    _ANCOLD,
                    anchor_n=1.0,
                    anchor_f=1e-3,
                    slope=-1.0,
                    n_min=1.0,
                    n_max=1000.0,
                ),
                FNLimitLine(
                    "ANCOLD societal risk limit, new dams",
                    _ANCOLD,
                    anchor_n=1.0,
                    anchor_f=1e-4,
                    slope=-1.0,
                    n_min=1.0,
                    n_max=1000.0,
                ),
            ),
        ),
        # USACE applies one set of tolerable risk guidelines to dams and levees; recalled for a levee: individual
        # life safety risk 1e-4 per year, societal F-N limit (N = 1, F = 1e-3) to (N = 1000, F = 1e-6). No annual
        # failure probability line (that is USBR's, for dams).
        "usace_levee": GuidelineSet(
            name="USACE tolerable risk guidelines applied to levees",
            source=_USACE_LEVEE,
            lines=(
                ProbabilityLine(
                    "USACE individual life safety risk, levee", _USACE_LEVEE, 1e-4, measure="individual_risk"
                ),
                FNLimitLine(
                    "USACE societal life safety risk limit, levee",
                    _USACE_LEVEE,
                    anchor_n=1.0,
                    anchor_f=1e-3,
                    slope=-1.0,
                    n_min=1.0,
                    n_max=1000.0,
                ),
            ),
        ),
    }
)

#: The kinds of structure a scenario can name (its top-level ``structure`` key).
STRUCTURES = ("dam", "levee", "unspecified")

#: Default sets drawn for each kind of structure when the scenario has no ``[guidelines]`` section. A levee
#: gets the USACE guidelines only; ``"unspecified"`` keeps the dam sets (and :func:`structure_note` says so).
STRUCTURE_DEFAULTS: Mapping[str, tuple] = MappingProxyType(
    {
        "dam": ("usace_2014", "usbr_2011", "ancold_2003"),
        "levee": ("usace_levee",),
        "unspecified": ("usace_2014", "usbr_2011", "ancold_2003"),
    }
)

#: Default sets written for dams only: not drawn for a levee unless its ``[guidelines]`` includes them.
DAM_ONLY = ("usbr_2011", "ancold_2003")

_STRUCTURE_WORDS = {"dam": "a dam", "levee": "a levee"}


def default_guidelines(structure: str = "unspecified") -> GuidelineSet:
    """The default lines for a kind of structure, as one set.

    Parameters
    ----------
    structure : {"dam", "levee", "unspecified"}

    Returns
    -------
    GuidelineSet
        The lines of the sets of :data:`STRUCTURE_DEFAULTS` ``[structure]``, in that order; its name says
        for which structure they are, its source joins the sets' citations.

    Raises
    ------
    ValueError
        For another structure.
    """
    if structure not in STRUCTURE_DEFAULTS:
        raise ValueError(f"structure must be one of {', '.join(STRUCTURES)}; got {structure!r}")
    sets = [DEFAULT_GUIDELINES[k] for k in STRUCTURE_DEFAULTS[structure]]
    who = _STRUCTURE_WORDS.get(structure, "a dam (the structure kind was not given)")
    return GuidelineSet(
        name=f"display defaults from published guidance for {who}",
        source="; ".join(gs.source for gs in sets),
        lines=tuple(ln for gs in sets for ln in gs.lines),
    )


def scenario_guideline_set(scenario) -> tuple[GuidelineSet, str]:
    """The reference lines of a scenario and where they come from.

    Parameters
    ----------
    scenario : Scenario
        Reads ``guidelines`` (a :class:`GuidelineSet`, a ``[guidelines]`` table, or None) and ``structure``.

    Returns
    -------
    lines : GuidelineSet
        The scenario's ``[guidelines]`` when it has a non-empty one, else :func:`default_guidelines` of its
        structure.
    origin : {"scenario", "defaults"}
    """
    cfg = getattr(scenario, "guidelines", None)
    if isinstance(cfg, GuidelineSet):  # validated when the scenario was loaded
        return cfg, "scenario"
    if cfg:
        return from_config(cfg, file=getattr(scenario, "path", None)), "scenario"
    return default_guidelines(getattr(scenario, "structure", "unspecified") or "unspecified"), "defaults"


def structure_note(structure: str, origin: str = "defaults") -> str:
    """One sentence on which lines are drawn and why: the structure kind and the origin of the lines.

    Parameters
    ----------
    structure : {"dam", "levee", "unspecified"}
    origin : {"defaults", "scenario"}
        As returned by :func:`scenario_guideline_set`.
    """
    if origin == "scenario":
        return "The reference lines are those of the scenario's [guidelines] section" + (
            f" (structure: {structure})." if structure in _STRUCTURE_WORDS else "."
        )
    if structure == "levee":
        return (
            "The structure is a levee: the default lines are the USACE tolerable risk guidelines, which USACE "
            "applies to levees as well as dams; the dam-only USBR public protection guidelines and ANCOLD "
            "are not drawn (add them with [guidelines] include if the governing agency asks)."
        )
    if structure == "dam":
        return "The structure is a dam: the default lines are those of USACE, USBR and ANCOLD for dams."
    return (
        'The scenario does not give the kind of structure (structure = "dam" or "levee"), so the '
        "default lines for a dam are drawn (USACE, USBR and ANCOLD); for a levee only the USACE lines apply."
    )


# --------------------------------------------------------------------------
# Configuration
# --------------------------------------------------------------------------
def from_config(config: Mapping | None, prefix: str = "guidelines", file=None) -> GuidelineSet:
    """Build a guideline set from a plain dict, as read from a TOML ``[guidelines]`` section.

    Parameters
    ----------
    config : mapping or None
        Keys (all optional; declared in ``SCHEMA["guidelines"]`` of :mod:`riskcalc.config.schema`):

        ``name``, ``source``
            Title and citation of the set (default ``"custom"`` and
            ``"user configuration"``).
        ``include``
            List of keys of :data:`DEFAULT_GUIDELINES` whose lines come first.
        ``fn_lines``
            List of tables with ``name``, ``source``, ``anchor_n``,
            ``anchor_f`` and optional ``slope`` (default -1), ``n_min``
            (default 1), ``n_max`` (default inf).
        ``life_loss_lines``
            List of tables with ``name``, ``source``, ``value`` [lives/yr] and
            optional ``n_min``, ``n_max``.
        ``probability_lines``
            List of tables with ``name``, ``source``, ``value`` [1/yr] and
            optional ``measure`` (``"annual_failure_probability"``, the
            default, or ``"individual_risk"``).
    prefix : str, default ``"guidelines"``
        Key path of ``config`` used in error messages.
    file : str or path, optional
        The file the section came from, for error messages.

    Returns
    -------
    GuidelineSet

    Raises
    ------
    InputError
        (a ``ValueError``) naming the key, e.g.
        ``key 'guidelines.fn_lines[0].anchor_f': -0.001 is outside (0, 1]; expected a positive annual
        probability, at most 1``. The keys and their checks are declared in
        :mod:`riskcalc.config.schema`; the reading is :func:`riskcalc.config.guidelines.read_guidelines`.

    Examples
    --------
    >>> gs = from_config({"fn_lines": [{"name": "limit", "source": "Agency policy 2020, s. 4",
    ...                                 "anchor_n": 1, "anchor_f": 1e-3, "n_max": 1000}]})
    >>> float(evaluate_line(gs.lines[0], 10.0))
    0.0001
    """
    from ..config.guidelines import read_guidelines

    return read_guidelines(config, file=file, prefix=prefix)


# --------------------------------------------------------------------------
# Evaluation and checks
# --------------------------------------------------------------------------
def _in_range(line, n):
    lo_ok = n > line.n_min if (isinstance(line, LifeLossLine) and line.n_min == 0) else n >= line.n_min
    return lo_ok & (n <= line.n_max) & (n > 0)


def evaluate_line(line: Line, n):
    """The line's annual probability at N, vectorized.

    Parameters
    ----------
    line : FNLimitLine, LifeLossLine or ProbabilityLine
        An individual-risk :class:`ProbabilityLine` is refused (it has no
        place on F-N axes).
    n : float or array_like
        Numbers of fatalities [lives], any shape.

    Returns
    -------
    f : float or ndarray, same shape as ``n``
        ``anchor_f * (n / anchor_n)**slope``, ``value / n`` or ``value``
        [1/yr]; NaN outside the line's N range, for ``n <= 0`` and for NaN.

    Raises
    ------
    ValueError
        For an individual-risk line.
    """
    n = np.asarray(n, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        if isinstance(line, FNLimitLine):
            # log10 F = log10 anchor_f + slope (log10 N - log10 anchor_n)
            f = line.anchor_f * np.power(n / line.anchor_n, line.slope)
            ok = _in_range(line, n)
        elif isinstance(line, LifeLossLine):
            f = line.value / n  # f N = c
            ok = _in_range(line, n)
        elif isinstance(line, ProbabilityLine):
            if not line.on_chart:
                raise ValueError(
                    f"'{line.name}' limits individual risk; compare a computed individual risk "
                    "with check_value, it is not a line on F-N axes"
                )
            f = np.full(n.shape, line.value)
            ok = n > 0
        else:
            raise TypeError(f"expected a guideline line, got {type(line).__name__}")
    out = np.where(ok, f, np.nan)
    return out[()] if out.ndim == 0 else out


@dataclass(frozen=True)
class PointCheck:
    """An f-N point against a line.

    Attributes
    ----------
    n : ndarray
        ``N = ALL / AFP`` [lives]; NaN where AFP is 0.
    f : ndarray
        The point's annual failure probability [1/yr].
    limit : ndarray
        The line's value at ``n`` [1/yr] (NaN outside its range).
    ratio : ndarray
        Computed risk / line [-]; ``> 1`` exceeds. 0 where AFP is 0; NaN
        where ``n`` is outside the range of an F-N or life-loss line (the
        line does not apply to the point: "not applicable", not "below").
    exceeds : ndarray of bool
        ``ratio > 1`` (False where the ratio is NaN).
    """

    n: np.ndarray
    f: np.ndarray
    limit: np.ndarray
    ratio: np.ndarray
    exceeds: np.ndarray


def check_point(line: Line, afp, all_) -> PointCheck:
    """Check f-N points (AFP, ALL / AFP) against a line, vectorized over points.

    Parameters
    ----------
    line : FNLimitLine, LifeLossLine or ProbabilityLine (annual failure probability)
    afp : float or array_like
        Annual failure probability [1/yr], e.g. ``(R,)`` per realization.
    all_ : float or array_like
        Annualized life loss [lives/yr], paired with ``afp``.

    Returns
    -------
    PointCheck
        The ratio is ``ALL / c`` for a life-loss line (the same as
        ``f / (c / N)``), ``AFP / value`` for a probability line and
        ``AFP / F_line(N)`` for an F-N line; NaN (not applicable) where N
        lies outside the range of a life-loss or F-N line. An f-N point is
        meant for f-N lines (life-loss and annual failure probability lines);
        an F-N limit line limits an F-N curve (:func:`check_fn_curve`), and
        :mod:`riskcalc.decision.reference_checks` compares it with the curve only.

    Raises
    ------
    ValueError
        For an individual-risk line, or for negative AFP or ALL.
    """
    f, life = np.broadcast_arrays(np.asarray(afp, dtype=float), np.asarray(all_, dtype=float))
    if np.any(f < 0) or np.any(life < 0):
        raise ValueError("afp and all_ must be >= 0")
    if isinstance(line, ProbabilityLine) and not line.on_chart:
        raise ValueError(f"'{line.name}' limits individual risk, not an f-N point; use check_value")
    with np.errstate(divide="ignore", invalid="ignore"):
        n = np.where(f > 0, life / np.where(f > 0, f, 1.0), np.nan)
        limit = np.asarray(evaluate_line(line, n), dtype=float)
        if isinstance(line, LifeLossLine):
            # ALL / c where the point's N is in the line's range; a point outside it is not on the line's
            # part of the chart (not applicable, NaN), except a point without life loss (N = 0) against a
            # line drawn for every N > 0: ALL = 0 lies below it
            ratio = np.where(np.isnan(limit), np.nan, life / line.value)
            if line.n_min == 0:
                ratio = np.where((f > 0) & (life == 0), 0.0, ratio)
        elif isinstance(line, ProbabilityLine):
            ratio = f / line.value
        else:
            ratio = f / limit
        ratio = np.where(f == 0, 0.0, ratio)
        ratio = np.where(np.isnan(f) | np.isnan(life), np.nan, ratio)
    exceeds = np.asarray(ratio > 1)
    return PointCheck(n=n, f=np.array(f), limit=limit, ratio=np.asarray(ratio), exceeds=exceeds)


def check_value(line: ProbabilityLine, value):
    """Ratio of a computed annual probability (AFP or individual risk) to a probability line.

    Parameters
    ----------
    line : ProbabilityLine
    value : float or array_like
        The computed annual probability [1/yr] of the line's ``measure``.

    Returns
    -------
    ratio : float or ndarray
        ``value / line.value`` [-]; ``> 1`` exceeds the line.
    """
    if not isinstance(line, ProbabilityLine):
        raise TypeError(f"check_value takes a ProbabilityLine, got {type(line).__name__}")
    out = np.asarray(value, dtype=float) / line.value
    return out[()] if out.ndim == 0 else out


@dataclass(frozen=True)
class CurveCheck:
    """An F-N curve (or one per realization) against a line.

    Attributes
    ----------
    ratio : ndarray, shape ``(..., K)``
        For each curve point ``k``, the largest curve / line ratio over the
        N the point speaks for (see :func:`check_fn_curve`); NaN where that
        lies outside the line's range.
    n_at : ndarray, shape ``(..., K)``
        Where each ratio is taken [lives].
    max_ratio : ndarray, shape ``(...)``
        The largest ratio over the curve; NaN when no point is in range.
    n_at_max : ndarray, shape ``(...)``
        N where the largest ratio is taken [lives].
    exceeds : ndarray of bool, shape ``(...)``
        ``max_ratio > 1``.
    """

    ratio: np.ndarray
    n_at: np.ndarray
    max_ratio: np.ndarray
    n_at_max: np.ndarray
    exceeds: np.ndarray


def check_fn_curve(line: Line, n, f, step: bool = True) -> CurveCheck:
    """Check an F-N curve against a line: by how much it exceeds, and where.

    Parameters
    ----------
    line : FNLimitLine, LifeLossLine or ProbabilityLine (annual failure probability)
    n : array_like, shape ``(K,)``
        Numbers of fatalities [lives], strictly increasing.
    f : array_like, shape ``(..., K)``
        Annual probability of ``n`` or more fatalities [1/yr], e.g. ``(R, K)``
        with one curve per realization.
    step : bool, default True
        True reads the curve as the step function it is,
        ``F(N) = f[k]`` for ``n[k] <= N < n[k+1]``, and checks each step at
        its worst point: the lines fall with N, so that is the right end of
        the step within the line's range (approached from the left). The last
        point is checked at ``n[-1]`` only (beyond it the curve is not given).
        False checks the given points only.

    Returns
    -------
    CurveCheck
    """
    n = np.asarray(n, dtype=float)
    f = np.asarray(f, dtype=float)
    if n.ndim != 1 or n.size == 0:
        raise ValueError(f"n must be a 1-D array of fatalities; got shape {n.shape}")
    if np.any(~np.isfinite(n)) or np.any(np.diff(n) <= 0):
        raise ValueError("n must be finite and strictly increasing")
    if f.ndim == 0 or f.shape[-1] != n.size:
        raise ValueError(f"f must have {n.size} values on its last axis; got shape {f.shape}")
    if isinstance(line, ProbabilityLine) and not line.on_chart:
        raise ValueError(f"'{line.name}' limits individual risk, not an F-N curve; use check_value")
    n_at = n.copy()
    if step and n.size > 1:
        lo = getattr(line, "n_min", 0.0)
        hi = getattr(line, "n_max", math.inf)
        right = np.minimum(n[1:], hi)
        # a step [n_k, n_k+1) that meets the range is checked at min(n_k+1, n_max); since the curve is
        # constant and the line falls, the ratio there is the supremum over the step
        meets = (right >= np.maximum(n[:-1], lo)) & (n[1:] > lo)
        n_at[:-1] = np.where(meets, right, n[:-1])
    limit = np.asarray(evaluate_line(line, n_at), dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = f / limit
    n_at_b = np.broadcast_to(n_at, ratio.shape)
    filled = np.where(np.isnan(ratio), -np.inf, ratio)
    k = np.argmax(filled, axis=-1)
    max_ratio = np.take_along_axis(filled, k[..., None], axis=-1)[..., 0]
    none = np.isneginf(max_ratio)
    max_ratio = np.where(none, np.nan, max_ratio)
    n_at_max = np.where(none, np.nan, np.take_along_axis(n_at_b, k[..., None], axis=-1)[..., 0])
    return CurveCheck(
        ratio=ratio, n_at=np.array(n_at_b), max_ratio=max_ratio, n_at_max=n_at_max, exceeds=np.asarray(max_ratio > 1)
    )
