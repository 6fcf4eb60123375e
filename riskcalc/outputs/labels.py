"""Names, units, number formats and the caution text that every output shares.

One place for what a reader sees around a number: the short name and label of
each output (AFP, EAD, ALL and their variants), its unit text with the
scenario's currency and stage or discharge units, the number formats, and the
caution. summary.json, comparison.json, the memo, comparison.md, the figures
and the command line all take their words from here, so they cannot drift
apart. CSV column names are not labels: they keep their own ASCII form
(``ead_usd_per_yr``), written by :mod:`riskcalc.outputs.tables`.

This module imports nothing from the rest of riskcalc, so any stage may use it.

Examples
--------
>>> output_label("expected_annual_damage").text("usd")
'Expected annual damage (EAD) [USD/yr]'
>>> fmt_money(1227087.4), fmt_num(1.1234e-05), fmt_ratio(11.614), fmt_return_period(0.0155)
('1,227,087', '1.12e-05', '11.61', '65')
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = [
    "CAUTION",
    "CAUTION_SHORT",
    "caution_line",
    "UNIT_TEXT",
    "unit_text",
    "currency_text",
    "OutputLabel",
    "OUTPUTS",
    "HEADLINE_KEYS",
    "output_label",
    "fmt_num",
    "fmt_money",
    "fmt_value",
    "fmt_ratio",
    "fmt_index",
    "fmt_percent",
    "fmt_return_period",
    "fmt_aep",
    "fmt_aep_axis",
    "fmt_quantity",
]

# --------------------------------------------------------------------------
# The caution
# --------------------------------------------------------------------------
_WHO = "qualified, licensed engineers"
_DECIDES = "the governing agency's current policy and local codes decide"

#: The caution every output carries (summary.json, sensitivity.json, comparison.json, the memo, comparison.md
#: and the run summary of the command line). Plain text: no character that Markdown or HTML would change.
CAUTION = (
    f"These results are screening support for {_WHO}; they support, and never replace, their judgment. "
    "The tolerable-risk lines are defaults from published guidance (or the lines the scenario gives): "
    f"{_DECIDES} which apply. The results are only as good as the inputs and the failure modes considered."
)

#: The same caution in one line, for the command line's help and the steps that draw no tolerable-risk lines.
CAUTION_SHORT = f"Screening support for {_WHO}; {_DECIDES}. Results are only as good as the inputs."


def caution_line(short: bool = False) -> str:
    """The caution as the command line prints it: ``'Caution: '`` and :data:`CAUTION` (or :data:`CAUTION_SHORT`)."""
    return "Caution: " + (CAUTION_SHORT if short else CAUTION)


# --------------------------------------------------------------------------
# Units
# --------------------------------------------------------------------------
#: Unit codes of the scenario (``[units]``) as a reader writes them.
UNIT_TEXT = {"m3s": "m³/s", "cfs": "ft³/s", "m": "m", "ft": "ft"}


def unit_text(code) -> str:
    """``'m³/s'`` for ``'m3s'``, ``'ft³/s'`` for ``'cfs'``; an unknown code as given, None as ``''``."""
    return UNIT_TEXT.get(code, code or "")


def currency_text(code) -> str:
    """The currency as shown in labels: the scenario's code in capitals (``'usd'`` -> ``'USD'``)."""
    return str(code or "").upper()


# --------------------------------------------------------------------------
# Outputs: key -> short name, label, unit
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class OutputLabel:
    """How one output is named and formatted.

    Attributes
    ----------
    key : str
        The summary.json key (``annual_failure_probability``).
    short : str
        Short name for table columns, panel titles and the command line (``AFP``).
    name : str
        Name in prose, lower case (``annual failure probability``).
    unit : str
        Unit text; ``{currency}`` stands for the scenario's currency (``{currency}/yr``).
    kind : str
        ``probability``, ``money`` or ``lives``: chooses the number format (:func:`fmt_value`).
    """

    key: str
    short: str
    name: str
    unit: str
    kind: str

    def unit_text(self, currency="") -> str:
        """The unit with the currency filled in (``'USD/yr'``)."""
        return self.unit.format(currency=currency_text(currency))

    def text(self, currency="", *, unit: bool = True) -> str:
        """Label for a table row or a legend: ``'Annual failure probability (AFP) [1/yr]'``."""
        s = f"{self.name[:1].upper()}{self.name[1:]} ({self.short})"
        return f"{s} [{self.unit_text(currency)}]" if unit else s

    def axis(self, currency="") -> str:
        """Short label with the unit, for an axis or a narrow column: ``'EAD [USD/yr]'``."""
        return f"{self.short} [{self.unit_text(currency)}]"

    def fmt(self, v) -> str:
        """``v`` in this output's number format."""
        return fmt_value(v, self.kind)


def _o(key, short, name, unit, kind):
    return key, OutputLabel(key, short, name, unit, kind)


#: Every named output, by summary.json key (the three headline figures first).
OUTPUTS = dict(
    (
        _o("annual_failure_probability", "AFP", "annual failure probability", "1/yr", "probability"),
        _o("expected_annual_damage", "EAD", "expected annual damage", "{currency}/yr", "money"),
        _o("annualized_life_loss", "ALL", "annualized life loss", "lives/yr", "lives"),
        _o(
            "expected_annual_damage_incremental",
            "EAD inc.",
            "incremental expected annual damage (caused by failure)",
            "{currency}/yr",
            "money",
        ),
        _o(
            "annualized_life_loss_incremental",
            "ALL inc.",
            "incremental annualized life loss (caused by failure)",
            "lives/yr",
            "lives",
        ),
        _o(
            "annual_failure_probability_lower_bound",
            "AFP lower bound",
            "annual failure probability, fully dependent failure modes",
            "1/yr",
            "probability",
        ),
        _o(
            "annual_failure_probability_upper_bound",
            "AFP upper bound",
            "annual failure probability, mutually exclusive failure modes",
            "1/yr",
            "probability",
        ),
    )
)

#: The headline figures of summary.json, in report order.
HEADLINE_KEYS = ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss")

#: Integrand names of the risk chain (the per-draw columns) -> summary.json keys.
_INTEGRANDS = {
    "afp": "annual_failure_probability",
    "ead": "expected_annual_damage",
    "all": "annualized_life_loss",
    "ead_incremental": "expected_annual_damage_incremental",
    "all_incremental": "annualized_life_loss_incremental",
    "afp_lower_bound": "annual_failure_probability_lower_bound",
    "afp_upper_bound": "annual_failure_probability_upper_bound",
}

_FM_PREFIX = "afp_fm:"
_FM_ADJ_PREFIX = "afp_fm_adjusted:"


def output_label(key: str) -> OutputLabel:
    """The :class:`OutputLabel` of a summary.json key, an integrand name (``ead``), ``afp_fm:<failure mode>`` or
    ``afp_fm_adjusted:<failure mode>``.

    Raises
    ------
    KeyError
        For a key that names no output.
    """
    if key.startswith(_FM_PREFIX):
        fm = key[len(_FM_PREFIX) :]
        return OutputLabel(key, f"AFP {fm}", f"annual failure probability, failure mode {fm}", "1/yr", "probability")
    if key.startswith(_FM_ADJ_PREFIX):
        fm = key[len(_FM_ADJ_PREFIX) :]
        return OutputLabel(
            key,
            f"AFP {fm} (adjusted)",
            f"annual failure probability, failure mode {fm}, common-cause adjusted",
            "1/yr",
            "probability",
        )
    return OUTPUTS[_INTEGRANDS.get(key, key)]


# --------------------------------------------------------------------------
# Number formats
# --------------------------------------------------------------------------
def _special(v):
    """Text for None, NaN and infinities; None for an ordinary number."""
    if v is None:
        return "n/a"
    v = float(v)
    if math.isnan(v):
        return "n/a"
    if math.isinf(v):
        return "∞" if v > 0 else "−∞"
    return None


def fmt_num(v, sig: int = 3) -> str:
    """Probabilities, life loss and other small quantities: ``sig`` significant figures.

    ``0.00873``, ``1.12e-05``, ``12.3``; ``n/a`` for None or NaN, ``∞`` / ``−∞`` for infinities.
    """
    s = _special(v)
    return s if s is not None else f"{float(v):.{sig}g}"


def fmt_money(v) -> str:
    """Money: whole currency units with thousands separators (``1,227,087``); below 100, three significant
    figures (``12.3``)."""
    s = _special(v)
    if s is not None:
        return s
    v = float(v)
    return f"{v:,.0f}" if abs(v) >= 100 else f"{v:.3g}"


def fmt_value(v, kind: str) -> str:
    """``v`` in the format of an output kind: ``money`` with :func:`fmt_money`, anything else :func:`fmt_num`."""
    return fmt_money(v) if kind == "money" else fmt_num(v)


def fmt_ratio(v) -> str:
    """Ratios (predictive / mode, benefit-cost ratio, ratio to a reference line): two decimals, ``11.61``."""
    s = _special(v)
    return s if s is not None else f"{float(v):.2f}"


def fmt_index(v, conf=None) -> str:
    """A sensitivity index, with its confidence half-width when given: ``0.61 ± 0.04``."""
    s = fmt_ratio(v)
    return s if conf is None or s == "n/a" or _special(conf) else f"{s} ± {float(conf):.2f}"


def fmt_percent(share, *, decimals: int = 0, sig: int | None = None) -> str:
    """A share as a percentage: ``0.537`` -> ``'54 %'``; ``decimals`` after the point, or ``sig`` significant
    figures for small shares (``fmt_percent(0.00012, sig=2)`` -> ``'0.012 %'``)."""
    s = _special(share)
    if s is not None:
        return s
    p = 100 * float(share)
    return (f"{p:.{sig}g}" if sig is not None else f"{p:.{decimals}f}") + " %"


def fmt_return_period(p) -> str:
    """The average interval 1 / p in years for an annual probability ``p``, as "once in N years" needs it.

    Whole years from 10 to 1,000 (``0.0155`` -> ``'65'``), three significant figures above
    (``1.23e-05`` -> ``'81,300'``), two below 10 (``0.3`` -> ``'3.3'``); ``n/a`` when ``p`` is not positive.
    """
    if p is None or _special(p) or not float(p) > 0:
        return "n/a"
    t = 1.0 / float(p)
    if t >= 1000:
        return f"{round(t, 2 - int(math.floor(math.log10(t)))):,.0f}"
    return f"{t:,.0f}" if t >= 10 else f"{t:.2g}"


def fmt_aep(p) -> str:
    """An AEP in prose: a percentage down to 0.1 % (``'1 %'``, ``'0.2 %'``), below that the probability
    (``'1e-05'``)."""
    s = _special(p)
    if s is not None:
        return s
    p = float(p)
    return f"{100 * p:g} %" if p >= 1e-3 else f"{p:g}"


def fmt_aep_axis(p) -> str:
    """An AEP on a figure's axis or legend: ``'0.01'``, ``'1e-4'`` for a power of ten, ``'2.0e-05'`` otherwise."""
    p = float(p)
    if not p > 0:
        return "0"
    if p >= 0.01:
        return f"{p:g}"
    e = round(math.log10(p))
    return f"1e{e}" if math.isclose(p, 10.0**e) else f"{p:.1e}"


def fmt_quantity(v, quantity: str = "discharge") -> str:
    """A hazard quantity: stage with two decimals (``'216.96'``), discharge like money (``'12,346'``, ``'98.7'``)."""
    s = _special(v)
    if s is not None:
        return s
    return f"{float(v):.2f}" if quantity == "stage" else fmt_money(v)
