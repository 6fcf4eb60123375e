"""riskcalc: flood, dam and levee risk from an ensemble of frequency curves.

Results are screening support for qualified, licensed engineers; the governing
agency's current policy and local codes decide.

The Python API mirrors the command line::

    import riskcalc
    sc = riskcalc.load_scenario("scenarios/amberlow_levee/scenario.toml")
    result = riskcalc.assess(sc)              # the whole chain, nothing written
    result.summary()["annual_failure_probability"]["predictive"]
    tables = result.tables()                  # dict of pandas DataFrames
    riskcalc.run("scenarios/amberlow_levee/scenario.toml", "out/amberlow")   # as `riskcalc run`
"""

__version__ = "0.1.0"

__all__ = ["__version__", "load_scenario", "assess", "run", "read_ensemble", "hazard_curves", "InputError"]


from .errors import InputError  # noqa: E402

#: The public names and where they live; imported on first use (PEP 562), so that ``import riskcalc``
#: (and the command line's ``--help`` and ``check``) does not load scipy's statistics, pandas,
#: Matplotlib or SALib before they are needed.
_LAZY = {
    "assess": ("riskcalc.risk.assess", "assess"),
    "hazard_curves": ("riskcalc.hazard", "hazard_curves"),
    "read_ensemble": ("riskcalc.hazard", "read_ensemble"),
    "load_scenario": ("riskcalc.config.scenario", "load_scenario"),
    "run": ("riskcalc.workflows", "run_scenario"),
}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        value = getattr(importlib.import_module(module), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'riskcalc' has no attribute {name!r}")


def __dir__():
    return sorted([*globals(), *_LAZY])
