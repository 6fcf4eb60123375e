"""Risk of the loadings of a study, each on its own, and their total.

Seismic loading
---------------
With λ_r(a) the r-th hazard curve (annual frequency of exceedance of ground
motion a), π_b the probability of pool bin b and P_f(a, h) the system failure
probability, the annual failure frequency of curve r is

    ν_r = Σ_b π_b ∫ P_f(a, h_b) |dλ_r(a)|,

summed on a log-spaced ground-motion grid as interval masses times the integrand
at the geometric cell centre (the tail cell above the grid at its lower end), as
for the flood (:mod:`riskcalc.risk.integrate`). Failures are Poisson events, so
the annual failure probability is 1 − exp(−ν); damage and life loss are
frequencies times consequences. For a power-law hazard λ = k0 a^(−k) and a
lognormal fragility (median A, β) the integral is λ(A) exp(k²β²/2) (Cornell et
al. 2002), which the tests check.

Static loading
--------------
Each failure mode's annual probability p_i is drawn from its distribution
(stratified: one uniform in each of D equal strata, shuffled; unbiased), P_f = 1 − Π(1 − p_i).

Total
-----
Loadings are taken as independent and rare: the total annualized figures are
sums over loadings (the rare-event sum; for AFP also the independence
combination 1 − Π(1 − AFP_l) and the bounds max_l AFP_l and min(1, Σ AFP_l));
their Monte Carlo standard errors add in quadrature. Percentiles and the shares
of draws above reference lines use paired draws: every draw of the first
(flood) loading is joined with a draw of each other loading chosen at random by
weight (independent knowledge uncertainty between loadings).

References
----------
.. [1] Cornell, C.A., Jalayer, F., Hamburger, R.O. and Foutch, D.A. (2002).
   Probabilistic basis for 2000 SAC Federal Emergency Management Agency steel
   moment frame guidelines. Journal of Structural Engineering 128(4), 526-533.
.. [3] Iman, R.L. (1981). Statistical methods for including uncertainties associated with the geologic
   isolation of radioactive waste which allow for a comparison with licensing criteria. In Proceedings
   of the Symposium on Uncertainties Associated with the Regulation of the Geologic Disposal of
   High-Level Radioactive Waste, NUREG/CP-0022, 145-157 (replicated Latin hypercube sampling)
   [from memory; check the reference].
.. [2] Ang, A.H.-S. and Tang, W.H. (1984). Probability Concepts in Engineering
   Planning and Design, Vol. II. Wiley (bounds of a series system).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..hazard.curves import weighted_quantile
from .integrate import cell_masses
from .records import HEADLINES, EnsembleStats, FNCurve, Headline, weighted_summary
from .standard_errors import clustered_standard_error

__all__ = [
    "LoadingResult",
    "StudyResult",
    "assess_seismic",
    "assess_static",
    "loading_from_risk",
    "combine_loadings",
    "loading_life_loss_range",
    "individual_risks",
    "IndividualRisk",
    "BASE_OUTPUTS",
]

#: Outputs every loading gives, before the per-failure-mode ones.
BASE_OUTPUTS = ("afp", "ead", "all", "ead_incremental", "all_incremental")


def _ratio(a, b):
    return a / b if b > 0 else (float("inf") if a > 0 else float("nan"))


@dataclass(frozen=True, eq=False)
class LoadingResult:
    """One loading's risk: per-draw values, the figures on every measure and its F-N curves.

    Attributes
    ----------
    name, kind : str
    names : tuple of str
        Output names: :data:`BASE_OUTPUTS` then ``afp_fm:<mode>`` and ``afp_fm_adjusted:<mode>``.
    values : ndarray (D, K)
    weights : ndarray (D,)
    cluster : ndarray (D,) of int
        The hazard realization of each draw (clusters for the standard error).
    predictive, mode, median_curve, nominal_response : dict of str to float
        Every output on the predictive measure (sampled response), the mode and median curves
        (nominal response) and the predictive hazard with the nominal response.
    fn : FNCurve
        On the study's common levels.
    fn_draws : ndarray (D, L) or None
    failure_mode_names : tuple
    has_hazard_ensemble : bool
    notes : list of str
    """

    name: str
    kind: str
    names: tuple
    values: np.ndarray
    weights: np.ndarray
    cluster: np.ndarray
    predictive: dict
    mode: dict
    median_curve: dict
    nominal_response: dict
    fn: FNCurve
    fn_draws: np.ndarray | None
    failure_mode_names: tuple
    has_hazard_ensemble: bool = True
    notes: list = field(default_factory=list)
    se_method: str = "clustered"

    def standard_error(self, name) -> float:
        """Monte Carlo standard error of the predictive value of output ``name``.

        ``clustered``: the draws of one hazard realization form a cluster (a sampled ensemble, the flood);
        ``replicates``: the draws are :data:`REPLICATES` independent stratified replicates (draw d belongs to
        replicate d mod G), so SE = sd of the G replicate means / sqrt(G), unbiased for the variance of
        their mean whatever the stratification gains (replicated Latin hypercube sampling, Iman 1981).
        """
        v, w, c = self.column(name), self.weights, self.cluster
        if self.se_method == "clustered":
            return clustered_standard_error(v, w, c)
        g = np.arange(v.size) % REPLICATES
        means = np.array([(w[g == j] @ v[g == j]) / w[g == j].sum() for j in range(REPLICATES)])
        return float(np.std(means, ddof=1) / np.sqrt(REPLICATES))

    def column(self, name) -> np.ndarray:
        return self.values[:, self.names.index(name)]

    def headline(self) -> dict:
        """Headline records of this loading alone."""
        out = {}
        for key, n, _ in HEADLINES:
            stats, _ = weighted_summary(self.column(n), self.weights)
            pv, mv, pn = self.predictive[n], self.mode[n], self.nominal_response[n]
            out[key] = Headline(
                predictive=pv,
                mode=mv,
                median_curve=self.median_curve[n],
                ensemble=stats,
                mc_standard_error=self.standard_error(n),
                ratio_predictive_to_mode=_ratio(pv, mv),
                predictive_nominal_response=pn,
                ratio_hazard_only=_ratio(pn, mv),
            )
        return out


@dataclass(frozen=True, eq=False)
class StudyResult:
    """The total over loadings and the breakdown.

    Attributes
    ----------
    loadings : tuple of LoadingResult
        The first is the scenario's own flood loading.
    headline : dict of str to Headline
        The totals (keys of :data:`~riskcalc.risk.records.HEADLINES`).
    predictive, mode, median_curve : dict
        Totals of :data:`BASE_OUTPUTS`.
    draws : dict of str to ndarray (D,)
        Paired per-draw totals of :data:`BASE_OUTPUTS`, with ``weights``.
    weights : ndarray (D,)
    fn : FNCurve
    fn_draws : ndarray (D, L) or None
    afp_combination : dict
        ``rare_event_sum``, ``independent``, ``lower_bound``, ``upper_bound`` (predictive AFP).
    """

    loadings: tuple
    headline: dict
    predictive: dict
    mode: dict
    median_curve: dict
    draws: dict
    weights: np.ndarray
    fn: FNCurve
    fn_draws: np.ndarray | None
    afp_combination: dict
    picks: tuple = ()

    def breakdown(self) -> list:
        """Rows per loading and failure mode: the share of each in the total predictive AFP, EAD and ALL."""
        rows = []
        tot = self.predictive
        for ld in self.loadings:
            rows.append(
                {
                    "loading": ld.name,
                    "kind": ld.kind,
                    "failure_mode": "(all)",
                    "afp_predictive_per_yr": ld.predictive["afp"],
                    "afp_mode_per_yr": ld.mode["afp"],
                    "ead_predictive": ld.predictive["ead"],
                    "all_predictive_lives_per_yr": ld.predictive["all"],
                    "share_of_total_afp": ld.predictive["afp"] / tot["afp"] if tot["afp"] > 0 else 0.0,
                    "share_of_total_ead": ld.predictive["ead"] / tot["ead"] if tot["ead"] > 0 else 0.0,
                    "share_of_total_all": ld.predictive["all"] / tot["all"] if tot["all"] > 0 else 0.0,
                }
            )
            for fm in ld.failure_mode_names:
                a = ld.predictive[f"afp_fm_adjusted:{fm}"]
                rows.append(
                    {
                        "loading": ld.name,
                        "kind": ld.kind,
                        "failure_mode": fm,
                        "afp_predictive_per_yr": a,
                        "afp_mode_per_yr": ld.mode[f"afp_fm_adjusted:{fm}"],
                        "ead_predictive": float("nan"),
                        "all_predictive_lives_per_yr": float("nan"),
                        "share_of_total_afp": a / tot["afp"] if tot["afp"] > 0 else 0.0,
                        "share_of_total_ead": float("nan"),
                        "share_of_total_all": float("nan"),
                    }
                )
        return rows


# ---------------------------------------------------------------------------------------------------
# helpers shared by the seismic and static loadings
# ---------------------------------------------------------------------------------------------------


#: Independent replicates of the stratified draws of seismic and static loadings (for their standard errors).
REPLICATES = 10


def _stratified(rng, n, k=1):
    """(k, n) stratified uniforms in :data:`REPLICATES` independent replicates (draw d in replicate d mod G).

    Within a replicate of m draws every row has one uniform point in each of the m strata [j/m, (j+1)/m), in
    an independent random order per row (a Latin hypercube across rows). Unbiased for any mean (unlike
    stratum midpoints, which miss the tails), with a variance no larger than plain random sampling.
    """
    u = np.empty((k, n))
    for g in range(min(REPLICATES, n)):
        idx = np.arange(g, n, REPLICATES)
        m = idx.size
        for row in range(k):
            u[row, idx] = rng.permutation((np.arange(m) + rng.random(m)) / m)
    return u


def _factors(chain, rng, n):
    """Damage and life-loss factors of ``n`` draws from the scenario's registry (stratified), and nominal."""
    df, lf = np.ones(n), np.ones(n)
    dn, ln = 1.0, 1.0
    for p in chain.uncertain.parameters:
        if p.target == "damage_factor":
            df = p.quantile(_stratified(rng, n)[0])
            dn = p.nominal
        elif p.target == "life_loss_factor":
            lf = p.quantile(_stratified(rng, n)[0])
            ln = p.nominal
    return df, lf, dn, ln


def _groups(modes, default):
    """Failure modes grouped by breach consequences: [(indices, ConsequenceCurves)]."""
    groups = [([i for i, m in enumerate(modes) if m.consequences is None], default)]
    groups += [([i], m.consequences) for i, m in enumerate(modes) if m.consequences is not None]
    return [(idx, c) for idx, c in groups if idx]


def _allocate(probs):
    """System P_f = 1 − Π(1 − P_i) and the proportional allocation a_i = P_f P_i / Σ P_j (same shapes)."""
    q = np.clip(np.stack(probs), 0.0, 1.0)
    with np.errstate(divide="ignore"):
        pf = -np.expm1(np.sum(np.log1p(-q), axis=0))
    s = q.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(s > 0, pf / np.where(s > 0, s, 1.0), 0.0)
    return pf, q * share


def _breach(groups, stage):
    """Breach damage and life loss per group at the pool stages: damage (G, B), life loss (G, E, B), weights (E,)."""
    dmg, ll, we = [], [], None
    for _, c in groups:
        dmg.append(np.interp(stage, c.stage, c.damage_breach))
        w, lb, _ = c.by_exposure()
        we = w
        ll.append(np.stack([np.interp(stage, c.stage, lb[e]) for e in range(w.size)]))
    return np.stack(dmg), np.stack(ll), we


def _fn_hist(rates, life, lf, levels, we):
    """F-N of D draws from failure rates per (draw, group, bin) (D, G, B) and life loss (G, E, B) × factor (D,)."""
    lv = np.asarray(levels, float)
    D, L = rates.shape[0], lv.size
    hist = np.zeros(D * (L + 1))
    for e in range(we.size):
        inc = life[None, :, e, :] * lf[:, None, None]  # (D, G, B)
        k = np.searchsorted(lv, inc, side="right")
        flat = (np.arange(D)[:, None, None] * (L + 1) + k).ravel()
        hist += np.bincount(flat, weights=(we[e] * rates).ravel(), minlength=D * (L + 1))
    hist = hist.reshape(D, L + 1)
    return np.cumsum(hist[:, :0:-1], axis=1)[:, ::-1]


def _names(fm_names):
    return BASE_OUTPUTS + tuple(f"afp_fm:{n}" for n in fm_names) + tuple(f"afp_fm_adjusted:{n}" for n in fm_names)


def _figures(rate_fm, alloc_rates, pool_p, dmg, life, we, df, lf, poisson):
    """Per-draw outputs from per-mode failure rates and allocated rates per group.

    rate_fm : (M, D, B) failure rate (or probability) of each mode per pool bin
    alloc_rates : (D, G, B) allocated system rate per group and bin
    Returns values (D, K) with K = BASE_OUTPUTS + per mode + adjusted per mode.
    """
    nu = np.einsum("dgb,b->d", alloc_rates, pool_p)  # system failure rate (or probability)
    afp = -np.expm1(-nu) if poisson else nu
    ead = np.einsum("dgb,gb,b->d", alloc_rates, dmg, pool_p) * df
    all_ = np.einsum("dgb,geb,e,b->d", alloc_rates, life, we, pool_p) * lf
    fm = np.einsum("mdb,b->md", rate_fm, pool_p)
    fm_p = -np.expm1(-fm) if poisson else fm
    return nu, afp, ead, all_, fm_p


# ---------------------------------------------------------------------------------------------------
# seismic
# ---------------------------------------------------------------------------------------------------


def _seismic_core(ld, masses, median_factors, stage, pool_p, groups, dmg, life, we, df, lf, pts, levels):
    """Outputs (D, K) and F-N (D, L) for D draws with ground-motion masses (D, P) and median factors (M, D)."""
    modes = ld.failure_modes
    h = stage[None, :, None]  # (1, B, 1)
    probs = [m.prob(pts[None, None, :], h, median_factors[i][:, None, None]) for i, m in enumerate(modes)]  # (D,B,P)
    _, alloc = _allocate(probs)
    w = masses[:, None, :]  # (D, 1, P)
    rate_fm = np.stack([np.sum(p * w, axis=-1) for p in probs])  # (M, D, B)
    alloc_m = np.stack([np.sum(a * w, axis=-1) for a in alloc])  # (M, D, B)
    alloc_g = np.stack([alloc_m[idx].sum(axis=0) for idx, _ in groups], axis=1)  # (D, G, B)
    nu, afp, ead, all_, fm_p = _figures(rate_fm, alloc_g, pool_p, dmg, life, we, df, lf, poisson=True)
    scale = np.where(nu > 0, afp / np.where(nu > 0, nu, 1.0), 1.0)  # adjusted values add up to the AFP
    adj = np.einsum("mdb,b->md", alloc_m, pool_p) * scale
    vals = np.column_stack([afp, ead, all_, ead, all_] + list(fm_p) + list(adj))
    fn = _fn_hist(alloc_g * pool_p[None, None, :], life, lf, levels, we) if levels is not None else None
    return vals, fn


def assess_seismic(ld, chain, levels, n_draws, seed) -> LoadingResult:
    """The risk of a :class:`~riskcalc.response.loadings.SeismicLoading`.

    Parameters
    ----------
    ld : SeismicLoading
    chain : ResponseChain
        The scenario's flood chain, for the consequence factors' distributions.
    levels : ndarray (L,)
        F-N levels.
    n_draws : int
        Draws wanted (the loading's ``draws`` overrides); each hazard curve gets ceil(n / R) response draws
        when the response is uncertain, else one.
    seed : numpy.random.SeedSequence or int
    """
    hz = ld.hazard
    nodes = hz.grid(ld.points)
    pts = np.concatenate([np.sqrt(nodes[:-1] * nodes[1:]), nodes[-1:]])
    m_all = cell_masses(hz.frequency_at(nodes))  # (R, P): frequency masses of the cells and the tail
    pool_s, pool_p = ld.pool.stage, ld.pool.probability
    groups = _groups(ld.failure_modes, ld.consequences)
    dmg, life, we = _breach(groups, pool_s)
    rng = np.random.default_rng(seed)
    uncertain_response = any(m.median_log_sd > 0 for m in ld.failure_modes) or any(
        p.target in ("damage_factor", "life_loss_factor") for p in chain.uncertain.parameters
    )
    R = hz.size
    want = int(ld.draws or n_draws or R)
    k = REPLICATES * max(1, -(-want // (R * REPLICATES))) if uncertain_response else 1
    D = R * k
    real = np.repeat(np.arange(R), k)
    weights = np.repeat(hz.weights / k, k)
    zf = _stratified(rng, D, len(ld.failure_modes))
    from scipy.special import ndtri

    mf = np.stack([np.exp(m.median_log_sd * ndtri(zf[i])) for i, m in enumerate(ld.failure_modes)])
    df, lf, dn, ln = _factors(chain, rng, D)
    step = max(1, int(4e6 // max(1, pool_s.size * pts.size)))  # draws per chunk: ~32 MB per work array
    parts = [
        _seismic_core(
            ld,
            m_all[real[a : a + step]],
            mf[:, a : a + step],
            pool_s,
            pool_p,
            groups,
            dmg,
            life,
            we,
            df[a : a + step],
            lf[a : a + step],
            pts,
            levels,
        )
        for a in range(0, D, step)
    ]
    vals = np.concatenate([v for v, _ in parts])
    fn_d = np.concatenate([f for _, f in parts])
    # the mode curve, the median curve and the mean curve with the nominal response
    lam_med = weighted_quantile(hz.frequency_at(nodes), hz.weights, [0.5])[0]
    measures = {
        "mode": cell_masses(hz.frequency_at(nodes, [hz.mode_index]))[0],
        "median_curve": cell_masses(lam_med),
        "nominal_response": hz.weights @ m_all,
    }
    ones = np.ones((len(ld.failure_modes), 1))
    out, fns = {}, {}
    for key, m in measures.items():
        v, f = _seismic_core(
            ld, m[None], ones, pool_s, pool_p, groups, dmg, life, we, np.full(1, dn), np.full(1, ln), pts, levels
        )
        out[key] = v[0]
        fns[key] = f[0]
    names = _names(ld.failure_mode_names)
    pred = weights @ vals
    q = weighted_quantile(fn_d, weights, [0.05, 0.5, 0.95])
    fn = FNCurve(
        levels=np.asarray(levels, float),
        predictive=weights @ fn_d,
        mode=fns["mode"],
        median_curve=fns["median_curve"],
        p05=q[0],
        p50=q[1],
        p95=q[2],
    )
    above = float(hz.weights @ hz.frequency[:, -1])
    notes = [
        f"{ld.name}: {R} hazard curve(s) of {hz.measure} taken as an enumerated logic tree (weights exact; the "
        f"standard errors count only the response draws, from {REPLICATES} independent stratified replicates), "
        f"{k} response draw(s) each; "
        f"{pool_s.size} pool level(s); frequency of ground motion above the table's last level "
        f"{above:.3g} per year is evaluated at that level"
    ]
    return LoadingResult(
        name=ld.name,
        kind="seismic",
        names=names,
        values=vals,
        weights=weights,
        cluster=real,
        predictive=dict(zip(names, pred)),
        mode=dict(zip(names, out["mode"])),
        median_curve=dict(zip(names, out["median_curve"])),
        nominal_response=dict(zip(names, out["nominal_response"])),
        fn=fn,
        fn_draws=fn_d,
        failure_mode_names=ld.failure_mode_names,
        notes=notes,
        se_method="replicates" if k > 1 else "clustered",
    )


def seismic_failure_frequency(ld, median_factor=None) -> float:
    """Mean annual failure frequency ν of a seismic loading with the nominal response, on the mean hazard."""
    hz = ld.hazard
    nodes = hz.grid(ld.points)
    pts = np.concatenate([np.sqrt(nodes[:-1] * nodes[1:]), nodes[-1:]])
    m = hz.weights @ cell_masses(hz.frequency_at(nodes))
    probs = [mo.prob(pts[None, :], ld.pool.stage[:, None]) for mo in ld.failure_modes]  # (B, P)
    pf, _ = _allocate(probs)
    return float(ld.pool.probability @ (pf @ m))


# ---------------------------------------------------------------------------------------------------
# static
# ---------------------------------------------------------------------------------------------------


def _static_core(ld, p_modes, pool_s, pool_p, groups, dmg, life, we, df, lf, levels):
    """Outputs (D, K) and F-N (D, L) from annual probabilities per mode (M, D)."""
    B = pool_s.size
    probs = [np.broadcast_to(p[:, None], (p.size, B)) for p in p_modes]  # (D, B)
    _, alloc = _allocate(probs)  # (M, D, B)
    alloc_g = np.stack([alloc[idx].sum(axis=0) for idx, _ in groups], axis=1)  # (D, G, B)
    nu, afp, ead, all_, fm_p = _figures(np.stack(probs), alloc_g, pool_p, dmg, life, we, df, lf, poisson=False)
    adj = np.einsum("mdb,b->md", alloc, pool_p)
    vals = np.column_stack([afp, ead, all_, ead, all_] + list(fm_p) + list(adj))
    fn = _fn_hist(alloc_g * pool_p[None, None, :], life, lf, levels, we) if levels is not None else None
    return vals, fn


def assess_static(ld, chain, levels, n_draws, seed) -> LoadingResult:
    """The risk of a :class:`~riskcalc.response.loadings.StaticLoading` (normal operation)."""
    pool_s, pool_p = ld.pool.stage, ld.pool.probability
    groups = _groups(ld.failure_modes, ld.consequences)
    dmg, life, we = _breach(groups, pool_s)
    rng = np.random.default_rng(seed)
    uncertain = any(m.probability.uncertain for m in ld.failure_modes) or any(
        p.target in ("damage_factor", "life_loss_factor") for p in chain.uncertain.parameters
    )
    D = int(ld.draws or max(int(n_draws or 0), 4000)) if uncertain else 1
    D = REPLICATES * max(1, -(-D // REPLICATES)) if uncertain else 1
    u = _stratified(rng, D, len(ld.failure_modes))
    p_modes = np.stack([m.probability.ppf(u[i]) for i, m in enumerate(ld.failure_modes)])
    df, lf, dn, ln = _factors(chain, rng, D)
    weights = np.full(D, 1.0 / D)
    vals, fn_d = _static_core(ld, p_modes, pool_s, pool_p, groups, dmg, life, we, df, lf, levels)
    nom = np.array([[m.probability.nominal] for m in ld.failure_modes])
    v0, f0 = _static_core(ld, nom, pool_s, pool_p, groups, dmg, life, we, np.full(1, dn), np.full(1, ln), levels)
    names = _names(ld.failure_mode_names)
    nominal = dict(zip(names, v0[0]))
    q = weighted_quantile(fn_d, weights, [0.05, 0.5, 0.95])
    fn = FNCurve(
        levels=np.asarray(levels, float),
        predictive=weights @ fn_d,
        mode=f0[0],
        median_curve=f0[0],
        p05=q[0],
        p50=q[1],
        p95=q[2],
    )
    return LoadingResult(
        name=ld.name,
        kind="static",
        names=names,
        values=vals,
        weights=weights,
        cluster=np.arange(D),
        predictive=dict(zip(names, weights @ vals)),
        mode=nominal,
        median_curve=dict(nominal),
        nominal_response=dict(nominal),
        fn=fn,
        fn_draws=fn_d,
        failure_mode_names=ld.failure_mode_names,
        has_hazard_ensemble=False,
        se_method="replicates" if D > 1 else "clustered",
        notes=[
            f"{ld.name}: no hazard curve; {D} stratified draw(s) of the annual probabilities; the 'mode' and "
            "'median curve' figures are the nominal probabilities (median, mode or value of each distribution); its "
            f"standard errors come from {REPLICATES} independent stratified replicates"
        ],
    )


# ---------------------------------------------------------------------------------------------------
# the flood loading (a RiskResult) as a LoadingResult, and life-loss ranges
# ---------------------------------------------------------------------------------------------------


def loading_from_risk(result, name: str) -> LoadingResult:
    """A flood :class:`~riskcalc.risk.records.RiskResult` as one loading of a study."""
    prop = result.propagation
    fm = result.scenario.model.failure_mode_names
    names = _names(fm)
    idx = [prop.names.index(n) for n in names]
    return LoadingResult(
        name=name,
        kind="flood",
        names=names,
        values=prop.values[:, idx],
        weights=prop.weights,
        cluster=prop.realization,
        predictive={n: result.values_predictive[n] for n in names},
        mode={n: result.values_mode[n] for n in names},
        median_curve={n: result.values_median[n] for n in names},
        nominal_response={n: float(v) for n, v in zip(prop.names, prop.on_measure(prop.masses_predictive))},
        fn=result.fn,
        fn_draws=prop.fn_per_draw,
        failure_mode_names=fm,
    )


def loading_life_loss_range(ld, chain) -> tuple:
    """Smallest and largest positive breach life loss a seismic or static loading can give (F-N levels)."""
    groups = _groups(ld.failure_modes, ld.consequences)
    _, life, _ = _breach(groups, ld.pool.stage)
    pos = life[life > 0]
    if pos.size == 0:
        return None
    lo, hi = float(pos.min()), float(pos.max())
    for p in chain.uncertain.parameters:
        if p.target == "life_loss_factor":
            lo *= float(p.quantile(1e-3)) / p.nominal
            hi *= float(p.quantile(1 - 1e-3)) / p.nominal
    return lo, hi


def combine_loadings(loadings, seed) -> StudyResult:
    """The total over loadings (see the module docstring), with paired draws for percentiles."""
    first = loadings[0]
    W = first.weights
    D = W.size
    rng = np.random.default_rng(seed)
    picks = [np.arange(D)] + [
        rng.choice(ld.weights.size, size=D, p=ld.weights / ld.weights.sum()) for ld in loadings[1:]
    ]
    draws = {n: sum(ld.column(n)[ix] for ld, ix in zip(loadings, picks)) for n in BASE_OUTPUTS}
    tot = {
        m: {n: float(sum(getattr(ld, m)[n] for ld in loadings)) for n in BASE_OUTPUTS}
        for m in ("predictive", "mode", "median_curve", "nominal_response")
    }
    heads = {}
    own = [ld.headline() for ld in loadings]
    for key, n, _ in HEADLINES:
        per = [h[key] for h in own]
        q = weighted_quantile(draws[n], W, [0.05, 0.5, 0.95])[:, 0]
        pv, mv, pn = tot["predictive"][n], tot["mode"][n], tot["nominal_response"][n]
        heads[key] = Headline(
            predictive=pv,
            mode=mv,
            median_curve=tot["median_curve"][n],
            ensemble=EnsembleStats(pv, float(q[0]), float(q[1]), float(q[2])),
            mc_standard_error=float(np.sqrt(sum(h.mc_standard_error**2 for h in per))),
            ratio_predictive_to_mode=_ratio(pv, mv),
            predictive_nominal_response=pn,
            ratio_hazard_only=_ratio(pn, mv),
        )
    afps = np.array([ld.predictive["afp"] for ld in loadings])
    comb = {
        "rare_event_sum": float(afps.sum()),
        "independent": float(-np.expm1(np.sum(np.log1p(-np.minimum(afps, 1.0))))),
        "lower_bound": float(afps.max()),
        "upper_bound": float(min(1.0, afps.sum())),
        "assumption": "loadings independent and rare: the headline is the sum over loadings; the independence "
        "combination 1 - prod(1 - AFP_l) and the bounds max_l AFP_l .. min(1, sum_l AFP_l) are shown beside it",
    }
    fn_draws = None
    if all(ld.fn_draws is not None for ld in loadings):
        fn_draws = sum(ld.fn_draws[ix] for ld, ix in zip(loadings, picks))
    levels = first.fn.levels
    fn_kw = dict(
        levels=levels,
        predictive=sum(np.asarray(ld.fn.predictive) for ld in loadings),
        mode=sum(np.asarray(ld.fn.mode) for ld in loadings),
        median_curve=sum(np.asarray(ld.fn.median_curve) for ld in loadings),
    )
    if fn_draws is not None:
        q = weighted_quantile(fn_draws, W, [0.05, 0.5, 0.95])
        fn_kw.update(p05=q[0], p50=q[1], p95=q[2])
    return StudyResult(
        loadings=tuple(loadings),
        headline=heads,
        predictive=tot["predictive"],
        mode=tot["mode"],
        median_curve=tot["median_curve"],
        draws=draws,
        weights=W,
        fn=FNCurve(**fn_kw),
        fn_draws=fn_draws,
        afp_combination=comb,
        picks=tuple(picks),
    )


@dataclass(frozen=True, eq=False)
class IndividualRisk:
    """Annual probability of death of the most exposed person of one location or group.

    IR = exposure × fatality rate × Σ AFP_i over the failure modes counted (every loading's, or those named),
    with AFP_i the common-cause adjusted failure-mode values (they add up to each loading's AFP).

    Attributes
    ----------
    name : str
    exposure, fatality_rate : float
    failure_modes : tuple of str
        ``"loading: mode"`` of every failure mode counted.
    predictive, mode : float
        [1/yr]
    p05, p50, p95 : float
        Over the paired draws.
    draws : ndarray (D,)
    weights : ndarray (D,)
    """

    name: str
    exposure: float
    fatality_rate: float
    failure_modes: tuple
    predictive: float
    mode: float
    p05: float
    p50: float
    p95: float
    draws: np.ndarray
    weights: np.ndarray

    def as_dict(self) -> dict:
        return {
            "name": self.name,
            "exposure": self.exposure,
            "fatality_rate_given_failure": self.fatality_rate,
            "failure_modes": list(self.failure_modes),
            "predictive": self.predictive,
            "mode": self.mode,
            "p05": self.p05,
            "p50": self.p50,
            "p95": self.p95,
            "ratio_predictive_to_mode": _ratio(self.predictive, self.mode),
        }


def individual_risks(loadings, picks, weights, groups) -> tuple:
    """:class:`IndividualRisk` of every ``[[individual_risk]]`` group."""
    from ..config.schema import _mode_key

    out = []
    for g in groups:
        want = {_mode_key(m) for m in g.failure_modes}
        sel = []
        for ld, ix in zip(loadings, picks):
            for m in ld.failure_mode_names:
                if not want or _mode_key(m) in want or _mode_key(f"{ld.name}: {m}") in want:
                    sel.append((ld, ix, m))
        f = g.exposure * g.fatality_rate
        draws = f * sum((ld.column(f"afp_fm_adjusted:{m}")[ix] for ld, ix, m in sel), np.zeros(weights.size))
        pred = f * sum(ld.predictive[f"afp_fm_adjusted:{m}"] for ld, _, m in sel)
        mode = f * sum(ld.mode[f"afp_fm_adjusted:{m}"] for ld, _, m in sel)
        q = weighted_quantile(draws, weights, [0.05, 0.5, 0.95])[:, 0]
        out.append(
            IndividualRisk(
                g.name,
                g.exposure,
                g.fatality_rate,
                tuple(f"{ld.name}: {m}" for ld, _, m in sel),
                float(pred),
                float(mode),
                float(q[0]),
                float(q[1]),
                float(q[2]),
                draws,
                weights,
            )
        )
    return tuple(out)
