"""Sobol' indices that grow their sample until the intervals are narrow: Janon's estimator, the settings."""

from __future__ import annotations

import numpy as np
import pytest

from riskcalc.config.settings import read_settings
from riskcalc.errors import InputError
from riskcalc.sensitivity.salib import WIDE_INTERVAL, Factor, sobol_indices, sobol_until_converged

PI = np.pi
# Ishigami & Homma (1990); Saltelli et al. (2008), The Primer, ch. 4: exact indices for a = 7, b = 0.1
# (docs: /work/shared/references.md section 6, computed from the analytic formulas)
ISHIGAMI_S1 = np.array([0.313905, 0.442411, 0.0])
ISHIGAMI_ST = np.array([0.557589, 0.442411, 0.243684])
ISHIGAMI = [Factor(f"x{i}", "uniform", -PI, PI) for i in (1, 2, 3)]


def ishigami(X, a=7.0, b=0.1):
    return np.sin(X[:, 0]) + a * np.sin(X[:, 1]) ** 2 + b * X[:, 2] ** 4 * np.sin(X[:, 0])


def test_janon_estimator_recovers_the_ishigami_indices():
    r = sobol_indices(ishigami, ISHIGAMI, n=2**13, seed=20240611, estimator="janon")
    # bootstrap half-widths at 95 %: the exact values lie within three of them
    np.testing.assert_array_less(np.abs(r.S1 - ISHIGAMI_S1), 3 * r.S1_conf + 1e-3)
    np.testing.assert_array_less(np.abs(r.ST - ISHIGAMI_ST), 3 * r.ST_conf + 1e-3)
    assert np.all(r.S1_conf < 0.05) and np.all(r.ST_conf < 0.05)


def test_a_factor_without_effect_gets_exact_zeros():
    factors = [*ISHIGAMI, Factor("unused", "uniform", 0.0, 1.0)]
    r = sobol_indices(ishigami, factors, n=1024, seed=3, estimator="janon")
    assert r.S1[3] == 0.0 and r.ST[3] == 0.0 and r.S1_conf[3] == 0.0 and r.ST_conf[3] == 0.0
    assert r.ST[0] > 0.3  # the others are estimated as usual


def heavy(X):
    # a dominant factor behind a heavy tail (as a hazard realization behind the life loss), a weak second one
    return np.exp(6.0 * X[:, 0]) * (1.0 + 0.2 * X[:, 1])


HEAVY = [Factor("dominant", "uniform", 0.0, 1.0), Factor("weak", "uniform", 0.0, 1.0)]


def test_janon_intervals_are_narrower_on_a_heavy_tailed_output():
    jan = sobol_indices(heavy, HEAVY, n=2048, seed=5, estimator="janon")
    sal = sobol_indices(heavy, HEAVY, n=2048, seed=5, estimator="saltelli")
    # the same design, two estimators: the dominant factor's intervals are several times narrower
    assert jan.S1_conf[0] < 0.5 * sal.S1_conf[0]
    assert jan.ST_conf[0] < sal.ST_conf[0]
    # and the estimates agree within the wider interval
    assert abs(jan.S1[0] - sal.S1[0]) < 2 * sal.S1_conf[0]


def test_sample_grows_in_powers_of_two_until_the_target():
    c = sobol_until_converged(
        ishigami, ISHIGAMI, n_start=256, target_width=0.05, n_max=2**14, seed=9, estimator="janon"
    )
    ns = [n for n, _ in c.history]
    assert ns == [256 * 2**k for k in range(len(ns))] and c.converged and len(ns) > 1
    assert max(c.history[-1][1].values()) < 0.05 <= max(c.history[-2][1].values())
    # the result at the last N is the same as one sample of that size (the design is extended, not redrawn)
    one = sobol_indices(ishigami, ISHIGAMI, n=c.n, seed=9, estimator="janon")
    np.testing.assert_allclose(c.result.ST, one.ST, rtol=1e-12)
    np.testing.assert_allclose(c.result.S1_conf, one.S1_conf, rtol=1e-12)


def test_growth_reports_progress_and_stops_at_the_cap():
    calls = []
    c = sobol_until_converged(
        heavy,
        HEAVY,
        n_start=64,
        target_width=1e-4,
        n_max=256,
        seed=2,
        estimator="janon",
        progress=lambda d, t: calls.append((d, t)),
    )
    assert not c.converged and c.n == 256 and any("not converged" in w for w in c.warnings)
    assert [d for d, _ in calls] == [64 * 4, 128 * 4, 256 * 4] and all(t == 256 * 4 for _, t in calls)


def test_settings_default_to_growth_with_the_warning_level_as_target():
    s = read_settings({"n": 512})
    assert s.grow and s.target == WIDE_INTERVAL and s.estimator == "janon" and s.n_max == 16384
    assert read_settings({"grow": False}).target is None  # one sample of size n, as before
    assert read_settings({"grow": False, "target_width": 0.05}).target == 0.05  # the existing key still works
    assert read_settings({"estimator": "saltelli"}).estimator == "saltelli"


@pytest.mark.parametrize(
    "table,key",
    [
        ({"estimator": "sobol"}, "sensitivity.estimator"),
        ({"grow": "yes"}, "sensitivity.grow"),
        ({"grid_target_error": 0.5}, "sensitivity.grid_target_error"),
    ],
)
def test_bad_new_settings_name_their_key(table, key):
    with pytest.raises(InputError, match=key.replace(".", r"\.")):
        read_settings(table, "scenario.toml")
