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


from .risk.assess import assess  # noqa: E402
from .errors import InputError  # noqa: E402
from .hazard import hazard_curves, read_ensemble  # noqa: E402
from .config.scenario import load_scenario  # noqa: E402
from .workflows import run_scenario as run  # noqa: E402
