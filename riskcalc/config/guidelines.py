"""The ``[guidelines]`` section of a scenario: tolerable-risk reference lines as a validated GuidelineSet."""

from __future__ import annotations

from collections.abc import Mapping

from ..decision.guidelines import DEFAULT_GUIDELINES, FNLimitLine, GuidelineSet, LifeLossLine, ProbabilityLine
from ..decision.guidelines import _FieldError
from ..errors import InputError
from .schema import validate

#: List key of the section -> the line type its entries build (their keys: ``SCHEMA[<section>]``).
LINE_TABLES = {"fn_lines": FNLimitLine, "life_loss_lines": LifeLossLine, "probability_lines": ProbabilityLine}


def read_guidelines(config, file=None, prefix: str = "guidelines") -> GuidelineSet:
    """Build a guideline set from a ``[guidelines]`` table.

    Parameters
    ----------
    config : mapping or None
        The table as read from TOML (keys declared in ``SCHEMA["guidelines"]``,
        ``SCHEMA["fn_line"]``, ``SCHEMA["life_loss_line"]`` and
        ``SCHEMA["probability_line"]`` of :mod:`riskcalc.config.schema`); None
        or empty gives an empty set named "custom".
    file : path, optional
        The file the table came from, for messages.
    prefix : str
        Key path of the table in messages.

    Returns
    -------
    GuidelineSet
        The lines of the ``include``-d default sets first, then the table's
        F-N, life-loss and probability lines in that order.

    Raises
    ------
    InputError
        Naming the key, e.g. ``guidelines.fn_lines[0].anchor_f`` (line entries
        are numbered from 0).
    """
    if config is None:
        config = {}
    if isinstance(config, Mapping) and not isinstance(config, dict):
        config = dict(config)
    if not isinstance(config, dict):
        raise InputError(f"expected a table of guideline settings, got {type(config).__name__}", file, key=prefix)
    g = validate("guidelines", config, file, prefix + ".")
    lines = [ln for name in g["include"] for ln in DEFAULT_GUIDELINES[name].lines]
    for table, cls in LINE_TABLES.items():
        for k, entry in enumerate(g[table]):
            try:
                lines.append(cls(**entry))
            except _FieldError as exc:  # rules between fields (n_min < n_max)
                raise InputError(exc.detail, file, key=f"{prefix}.{table}[{k}].{exc.field}") from None
    return GuidelineSet(name=g["name"], source=g["source"], lines=tuple(lines))
