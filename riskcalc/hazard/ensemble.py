"""The hazard ensemble: R equally likely (or weighted) frequency curves.

Two input forms are read:

Parameter sets
    One row a realization, the family's parameter columns (see
    :data:`riskcalc.hazard.families.FAMILIES`), optional ``weight``, optional
    ``log_posterior``, optional ``realization`` (a label), and optional ``chain``
    and ``iteration`` (whole numbers; both or neither) when the rows are an MCMC
    sample in a known order, so that its autocorrelation can be estimated.
Curve table (long form)
    One row a point of one realization's curve: ``realization``, ``aep``, and
    the quantity (``discharge`` or ``stage``, optionally with a unit suffix
    such as ``discharge_m3s``), optional ``weight`` and ``log_posterior``
    (constant within a realization). Every realization gives the same set of
    AEPs; its quantities must increase as AEP decreases. Between points the
    curve is linear on probability paper (the quantity, or its log10 for
    discharge, against the standard normal deviate of 1 - AEP), and beyond the
    first and last points it is extended along the end segments; the extension
    is flagged in the outputs.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from scipy import special as sc

from ..errors import InputError
from ..io import read_table, split_unit
from .families import FAMILIES, get_family

__all__ = ["HazardEnsemble", "read_parameter_ensemble", "read_curve_table", "read_ensemble", "normalize_weights"]

QUANTITIES = ("discharge", "stage")


def normalize_weights(w, path=None, rows=None, column="weight") -> np.ndarray:
    """Weights scaled to sum 1; refuses negative or all-zero weights."""
    w = np.asarray(w, dtype=float)
    if w.size == 0:
        raise InputError("no realizations", path)
    bad = np.flatnonzero(~np.isfinite(w) | (w < 0))
    if bad.size:
        i = int(bad[0])
        raise InputError(
            f"weight {w[i]} is negative or not finite; expected a weight >= 0",
            path,
            row=None if rows is None else rows[i],
            column=column,
        )
    total = w.sum()
    if not total > 0:
        raise InputError("all weights are zero; expected at least one positive weight", path, column=column)
    return w / total


@dataclass(frozen=True, eq=False)
class HazardEnsemble:
    """An ensemble of frequency curves of one quantity (peak discharge or peak stage).

    Attributes
    ----------
    family : str
        A family name from :data:`FAMILIES`, or ``"table"`` for curve tables.
    params : dict of str -> ndarray (R,)
        Parameter sets (families only).
    table_aep : ndarray (K,)
        The AEPs of a curve table, decreasing (tables only).
    table_values : ndarray (R, K)
        Each realization's quantity at ``table_aep``, increasing (tables only).
    weights : ndarray (R,)
        Realization weights, summing to 1.
    log_posterior : ndarray (R,) or None
    labels : tuple of str
        Realization labels.
    chain, iteration : ndarray (R,) of int or None
        The MCMC chain and iteration of each realization, when the ensemble is a Markov chain
        sample in a known order (used to estimate its autocorrelation); None otherwise.
    quantity : {"discharge", "stage"}
    unit : str or None
        Unit code of the quantity (``m3s``, ``cfs``, ``m``, ``ft``).
    source : str or None
        The file the ensemble came from.
    """

    family: str
    weights: np.ndarray
    params: dict = field(default_factory=dict)
    table_aep: np.ndarray | None = None
    table_values: np.ndarray | None = None
    log_posterior: np.ndarray | None = None
    labels: tuple = ()
    chain: np.ndarray | None = None
    iteration: np.ndarray | None = None
    quantity: str = "discharge"
    unit: str | None = None
    source: str | None = None

    # ------------------------------------------------------------------
    @property
    def size(self) -> int:
        return int(self.weights.size)

    @property
    def log_scale(self) -> bool:
        """True when the quantity is positive and curves are straight-ish in its log (discharge)."""
        if self.family == "table":
            return self.quantity == "discharge"
        return FAMILIES[self.family].log_quantity or self.quantity == "discharge"

    def subset(self, rows) -> HazardEnsemble:
        """The realizations ``rows`` (a slice or index array), weights kept as they are (not renormalized)."""
        idx = np.arange(self.size)[rows]
        return HazardEnsemble(
            family=self.family,
            weights=self.weights[idx],
            params={k: v[idx] for k, v in self.params.items()},
            table_aep=self.table_aep,
            table_values=None if self.table_values is None else self.table_values[idx],
            log_posterior=None if self.log_posterior is None else self.log_posterior[idx],
            labels=tuple(self.labels[i] for i in idx) if self.labels else (),
            chain=None if self.chain is None else self.chain[idx],
            iteration=None if self.iteration is None else self.iteration[idx],
            quantity=self.quantity,
            unit=self.unit,
            source=self.source,
        )

    def aep(self, x, rows=slice(None)) -> np.ndarray:
        """AEP ``(R, Q)`` of quantities ``x`` (Q,) for the realizations ``rows``."""
        x = np.asarray(x, dtype=float)
        if self.family == "table":
            return _table_aep(self.table_aep, self.table_values[rows], x, self.log_scale)
        fam = get_family(self.family)
        cols = [np.asarray(self.params[k][rows], dtype=float).reshape(-1, 1) for k in fam.parameters]
        return fam.aep(x, *cols)

    def quantile(self, p, rows=slice(None)) -> np.ndarray:
        """Quantities ``(R, P)`` with AEPs ``p`` (P,) for the realizations ``rows``."""
        p = np.asarray(p, dtype=float)
        if self.family == "table":
            return _table_quantile(self.table_aep, self.table_values[rows], p, self.log_scale)
        fam = get_family(self.family)
        cols = [np.asarray(self.params[k][rows], dtype=float).reshape(-1, 1) for k in fam.parameters]
        return fam.quantile(p, *cols)


# ----------------------------------------------------------------------
# Curve tables on probability paper
# ----------------------------------------------------------------------
def _paper_z(p):
    """Standard normal deviate of non-exceedance, -ndtri(p) (accurate for small p)."""
    return -sc.ndtri(np.asarray(p, dtype=float))


def _table_aep(table_aep, values, x, log_scale):
    """AEP of ``x`` for table curves: linear in (z, v) with v = log10(x) or x."""
    z = _paper_z(table_aep)  # (K,) increasing
    v = np.log10(values) if log_scale else np.asarray(values, float)  # (R, K)
    with np.errstate(divide="ignore", invalid="ignore"):
        xv = np.where(x > 0, np.log10(np.where(x > 0, x, 1.0)), -np.inf) if log_scale else x
    R, K = v.shape
    xv = np.broadcast_to(xv, (R, xv.shape[-1])) if xv.ndim == 1 else xv
    # segment index: number of table points at or below x, clipped to the end segments
    idx = np.zeros(xv.shape, dtype=np.intp)
    for k in range(1, K - 1):
        idx += v[:, k : k + 1] <= xv
    lo = np.take_along_axis(v, idx, axis=1)
    hi = np.take_along_axis(v, idx + 1, axis=1)
    zl, zh = z[idx], z[idx + 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        zz = zl + (xv - lo) * (zh - zl) / (hi - lo)
    out = sc.ndtr(-zz)
    out = np.where(np.isneginf(xv), 1.0, out)
    return out


def _table_quantile(table_aep, values, p, log_scale):
    z = _paper_z(table_aep)
    v = np.log10(values) if log_scale else np.asarray(values, float)
    zp = _paper_z(p)
    K = z.size
    idx = np.clip(np.searchsorted(z, zp, side="right") - 1, 0, K - 2)
    t = (zp - z[idx]) / (z[idx + 1] - z[idx])
    out = v[:, idx] + t * (v[:, idx + 1] - v[:, idx])
    return np.power(10.0, out) if log_scale else out


# ----------------------------------------------------------------------
# Readers
# ----------------------------------------------------------------------
def _quantity_column(table, path):
    for c in table.columns:
        s = split_unit(c, QUANTITIES)
        if s is not None:
            return c, s[0], s[1]
    raise InputError(
        "missing the quantity column; expected 'discharge' or 'stage' (optionally with a unit, e.g. 'discharge_m3s')",
        path,
        row=table.header_row,
    )


def read_parameter_ensemble(path, family: str, *, quantity="discharge", unit=None, sheet=None) -> HazardEnsemble:
    """Read a parameter-set table (one row a realization) for ``family``.

    Raises
    ------
    InputError
        Unknown family, missing or unknown columns, non-numeric or
        non-finite cells, ``sd``/``scale`` <= 0, negative or all-zero weights.
    """
    path = Path(path)
    try:
        fam = get_family(family)
    except ValueError as exc:
        raise InputError(str(exc), path) from None
    table = read_table(path, what=f"{fam.name} ensemble", sheet=sheet)
    optional = ("weight", "log_posterior", "realization", "chain", "iteration")
    table.require(fam.parameters, optional, what=f"{fam.name} ensemble")
    order = {}
    if table.has("chain") != table.has("iteration"):
        missing = "iteration" if table.has("chain") else "chain"
        raise InputError(
            f"missing column '{missing}': an MCMC order needs both chain and iteration", path, row=table.header_row
        )
    for name in ("chain", "iteration"):
        if table.has(name):
            v = table.numbers(name, nonnegative=True, what="a whole number >= 0")
            bad = np.flatnonzero(v != np.round(v))
            if bad.size:
                raise InputError(f"{v[bad[0]]:g} is not a whole number", path, row=table.rows[bad[0]], column=name)
            order[name] = v.astype(np.int64)
    params = {}
    for name in fam.parameters:
        params[name] = table.numbers(
            name, positive=name in fam.positive, what="a number > 0" if name in fam.positive else "a finite number"
        )
    if table.has("weight"):
        w = table.numbers("weight", nonnegative=True, what="a weight >= 0")
        w = normalize_weights(w, path, table.rows)
    else:
        w = np.full(len(table), 1.0 / len(table))
    lp = table.numbers("log_posterior") if table.has("log_posterior") else None
    labels = (
        tuple(table.text("realization")) if table.has("realization") else tuple(str(i + 1) for i in range(len(table)))
    )
    return HazardEnsemble(
        family=fam.name,
        weights=w,
        params=params,
        log_posterior=lp,
        labels=labels,
        quantity=quantity,
        unit=unit,
        source=str(path),
        **order,
    )


def read_curve_table(path, *, sheet=None, unit=None) -> HazardEnsemble:
    """Read a long-form curve table (``realization``, ``aep``, quantity, optional ``weight``, ``log_posterior``).

    Raises
    ------
    InputError
        Missing or unknown columns, AEPs outside (0, 1), realizations with
        different AEP sets, a curve that does not increase as AEP decreases,
        weights that change within a realization.
    """
    path = Path(path)
    table = read_table(path, what="curve table", sheet=sheet)
    qcol, quantity, qunit = _quantity_column(table, path)
    if unit is not None and qunit is not None and qunit != unit:
        raise InputError(
            f"unit '{qunit}' does not match the scenario's unit '{unit}'", path, row=table.header_row, column=qcol
        )
    optional = ("weight", "log_posterior")
    table.require(("realization", "aep", qcol), optional, what="curve table")
    aeps = table.numbers("aep", what="an AEP strictly between 0 and 1")
    for a, row in zip(aeps, table.rows):
        if not 0 < a < 1:
            raise InputError(f"AEP {a} is outside (0, 1)", path, row=row, column="aep")
    vals = table.numbers(
        qcol, positive=quantity == "discharge", what="a discharge > 0" if quantity == "discharge" else "a finite stage"
    )
    labels = [s.strip() for s in table.text("realization")]
    for lab, row in zip(labels, table.rows):
        if lab == "":
            raise InputError("empty realization label", path, row=row, column="realization")
    w_all = table.numbers("weight", nonnegative=True, what="a weight >= 0") if table.has("weight") else None
    lp_all = table.numbers("log_posterior") if table.has("log_posterior") else None
    order: list = []
    groups: dict = {}
    for i, lab in enumerate(labels):
        if lab not in groups:
            groups[lab] = []
            order.append(lab)
        groups[lab].append(i)
    ref = None
    values, weights, lps = [], [], []
    for lab in order:
        ii = np.array(groups[lab])
        srt = ii[np.argsort(-aeps[ii], kind="stable")]
        a = aeps[srt]
        if len(a) < 2:
            raise InputError(
                f"realization '{lab}' has {len(a)} point; expected at least 2",
                path,
                row=table.rows[ii[0]],
                column="aep",
            )
        if ref is None:
            ref = a
            if np.any(np.diff(ref) >= 0):
                j = int(np.flatnonzero(np.diff(ref) >= 0)[0])
                raise InputError(
                    f"AEP {ref[j]} appears twice in realization '{lab}'", path, row=table.rows[srt[j + 1]], column="aep"
                )
        elif len(a) != len(ref) or not np.allclose(a, ref, rtol=1e-9, atol=0):
            raise InputError(
                f"realization '{lab}' does not give the same AEPs as realization '{order[0]}'",
                path,
                row=table.rows[ii[0]],
                column="aep",
            )
        v = vals[srt]
        d = np.diff(v)
        if np.any(d <= 0):
            j = int(np.flatnonzero(d <= 0)[0])
            raise InputError(
                f"curve '{lab}' is not monotone: {v[j + 1]:g} at AEP {a[j + 1]:g} is not above "
                f"{v[j]:g} at AEP {a[j]:g}",
                path,
                row=table.rows[srt[j + 1]],
                column=qcol,
            )
        values.append(v)
        if w_all is not None:
            wv = w_all[ii]
            if np.ptp(wv) > 0:
                raise InputError(
                    f"weight changes within realization '{lab}'",
                    path,
                    row=table.rows[ii[int(np.argmax(wv != wv[0]))]],
                    column="weight",
                )
            weights.append(wv[0])
        if lp_all is not None:
            lv = lp_all[ii]
            if np.ptp(lv) > 0:
                raise InputError(
                    f"log_posterior changes within realization '{lab}'",
                    path,
                    row=table.rows[ii[int(np.argmax(lv != lv[0]))]],
                    column="log_posterior",
                )
            lps.append(lv[0])
    R = len(order)
    w = normalize_weights(weights, path, None) if w_all is not None else np.full(R, 1.0 / R)
    return HazardEnsemble(
        family="table",
        weights=w,
        table_aep=np.asarray(ref),
        table_values=np.vstack(values),
        log_posterior=None if lp_all is None else np.asarray(lps),
        labels=tuple(order),
        quantity=quantity,
        unit=qunit or unit,
        source=str(path),
    )


def read_ensemble(path, family: str, **kw) -> HazardEnsemble:
    """Read either form: ``family='table'`` for curve tables, a family name for parameter sets."""
    if str(family).strip().lower() == "table":
        kw.pop("quantity", None)
        return read_curve_table(path, **kw)
    return read_parameter_ensemble(path, family, **kw)
