"""Regenerate the invented demo ensembles.

Everything here is invented: the Kestrel River, the town of Amberlow and its
levee, the Tarnhollow Dam and the village of Lowmere below it do not exist.
The annual-peak records are synthetic draws from chosen distributions; the
ensembles are posterior samples of those records' frequency curves, drawn by
a random-walk Metropolis sampler, so they look like the output of a Bayesian
flood-frequency analysis.

Run ``python scenarios/generate_demo_data.py`` from the project root; it
writes the CSV files beside this script and is deterministic (fixed seeds).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from scipy import stats

HERE = Path(__file__).resolve().parent


def metropolis(logpost, start, step, n_keep, thin, burn, rng):
    """Random-walk Metropolis: returns (n_keep, d) draws and their log posterior."""
    x = np.asarray(start, float)
    lp = logpost(x)
    keep, keep_lp = [], []
    total = burn + n_keep * thin
    for i in range(total):
        prop = x + step * rng.standard_normal(x.size)
        lpp = logpost(prop)
        if np.log(rng.uniform()) < lpp - lp:
            x, lp = prop, lpp
        if i >= burn and (i - burn) % thin == 0:
            keep.append(x.copy())
            keep_lp.append(lp)
    return np.array(keep), np.array(keep_lp)


def levee_ensemble(rng):
    """Kestrel River at Amberlow: 52 years of synthetic annual peaks, LP3 posterior."""
    true = dict(mean=2.78, sd=0.24, skew=0.25)
    record = stats.pearson3.rvs(true["skew"], loc=true["mean"], scale=true["sd"], size=52, random_state=rng)

    def logpost(th):
        m, s, g = th
        if s <= 0.02 or abs(g) > 2.5:
            return -np.inf
        ll = stats.pearson3.logpdf(record, g, loc=m, scale=s).sum()
        # weak regional-skew style prior on the skew, flat on mean, 1/sd on sd
        return ll + stats.norm.logpdf(g, 0.0, 0.35) - np.log(s)

    start = [record.mean(), record.std(ddof=1), 0.0]
    draws, lp = metropolis(logpost, start, np.array([0.03, 0.02, 0.12]), 2000, 10, 4000, rng)
    return draws, lp


def dam_ensemble(rng):
    """Tarnhollow Dam inflow: 38 years of synthetic annual peak inflows, GEV posterior (hydrology sign)."""
    # scipy's genextreme shape c has the hydrology sign: c < 0 is heavy-tailed
    record = stats.genextreme.rvs(-0.08, loc=410.0, scale=140.0, size=38, random_state=rng)

    def logpost(th):
        loc, log_scale, k = th
        if abs(k) > 0.5:
            return -np.inf
        ll = stats.genextreme.logpdf(record, k, loc=loc, scale=np.exp(log_scale)).sum()
        if not np.isfinite(ll):
            return -np.inf
        # geophysical shape prior (a beta on [-0.5, 0.5] centred near -0.1), flat on loc and log scale
        return ll + stats.beta.logpdf(k + 0.5, 6, 9)

    start = [record.mean() - 0.45 * record.std(), np.log(0.78 * record.std()), -0.05]
    draws, lp = metropolis(logpost, start, np.array([18.0, 0.09, 0.06]), 3000, 10, 5000, rng)
    draws[:, 1] = np.exp(draws[:, 1])
    return draws, lp


def write(path, header, rows, comment):
    with open(path, "w", encoding="utf-8", newline="\n") as fh:
        for line in comment:
            fh.write(f"# {line}\n")
        fh.write(",".join(header) + "\n")
        for r in rows:
            fh.write(",".join(f"{v:.6g}" if isinstance(v, float) else str(v) for v in r) + "\n")


def main():
    d, lp = levee_ensemble(np.random.default_rng(20261202))
    write(
        HERE / "amberlow_levee" / "ensemble_lp3.csv",
        ["realization", "mean", "sd", "skew", "log_posterior"],
        [(i + 1, float(a), float(b), float(c), float(e)) for i, ((a, b, c), e) in enumerate(zip(d, lp))],
        [
            "INVENTED DATA for the riskcalc demo: Kestrel River at Amberlow (a fictional river and town).",
            "Posterior sample of log-Pearson III parameters of log10 annual peak discharge [m3/s].",
            "Regenerate with: python scenarios/generate_demo_data.py",
        ],
    )
    # the 2070 condition of the alternatives scenario: every realization's log10 mean raised by 0.02
    # (about 4.7 % higher discharges; an invented change), row r the future of realization r
    write(
        HERE / "amberlow_alternatives" / "ensemble_lp3_2070.csv",
        ["realization", "mean", "sd", "skew", "log_posterior"],
        [(i + 1, float(a) + 0.02, float(b), float(c), float(e)) for i, ((a, b, c), e) in enumerate(zip(d, lp))],
        [
            "INVENTED DATA for the riskcalc demo: Kestrel River at Amberlow (a fictional river and town), "
            "future condition 2070.",
            "The base ensemble (../amberlow_levee/ensemble_lp3.csv) with every realization's mean of log10 discharge "
            "raised by 0.02",
            "(discharges about 4.7 % higher, an invented change of climate and land use); row r is the future of "
            "realization r.",
        ],
    )
    d, lp = dam_ensemble(np.random.default_rng(7301))
    write(
        HERE / "tarnhollow_dam" / "inflow_gev.csv",
        ["realization", "location", "scale", "shape", "log_posterior"],
        [(i + 1, float(a), float(b), float(c), float(e)) for i, ((a, b, c), e) in enumerate(zip(d, lp))],
        [
            "INVENTED DATA for the riskcalc demo: Tarnhollow Dam (a fictional dam).",
            "Posterior sample of GEV parameters (hydrology sign: shape > 0 bounded above) of annual peak inflow [m3/s].",
            "Regenerate with: python scenarios/generate_demo_data.py",
        ],
    )


if __name__ == "__main__":
    main()
