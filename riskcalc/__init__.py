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


def __getattr__(name):  # lazy, so that `import riskcalc` stays light
    if name == "load_scenario":
        from .scenario import load_scenario
        return load_scenario
    if name == "assess":
        from .assess import assess
        return assess
    if name == "run":
        from .workflows import run_scenario
        return run_scenario
    if name == "read_ensemble":
        from .hazard import read_ensemble
        return read_ensemble
    if name == "hazard_curves":
        from .hazard import hazard_curves
        return hazard_curves
    if name == "InputError":
        from .errors import InputError
        return InputError
    raise AttributeError(f"module 'riskcalc' has no attribute '{name}'")
