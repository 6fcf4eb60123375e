"""Risk: integrals on the probability axis, the epistemic Monte Carlo, and a whole run."""
