"""Bad-input corpus: every case stops the real CLI with exit 2 and one located line, writing nothing.

Each case starts from the good scenario of ``scenario_factory`` (tests/conftest.py) and breaks one
thing. The check for every case, through ``riskcalc run``:

* exit status 2 (the project's error policy, docs/reliability.md);
* exactly one line on stderr, no traceback, naming the file and the place (key, row, column) and
  what was expected (the ``message`` regex of the case);
* no output directory and no ``.NAME.partial-*`` temporary directory left behind.

The expected messages are riskcalc's own wording, so each regex is the check; none is a number.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from riskcalc.cli import main

ROOT = Path(__file__).resolve().parents[1]
RISKCALC = ROOT / ".venv" / "bin" / "riskcalc"

FRAG_NODE = 'kind = "normal"\n  median = 5.0\n  spread = 0.5'


# ----------------------------------------------------------------------
# mutations of the good scenario (p is its scenario.toml)
# ----------------------------------------------------------------------
def sub(old, new):
    """Replace ``old`` (which must be there) by ``new`` in scenario.toml."""

    def mutate(p):
        text = p.read_text()
        assert old in text, f"the baseline scenario has no {old!r}"
        p.write_text(text.replace(old, new, 1))

    return mutate


def append(extra):
    def mutate(p):
        p.write_text(p.read_text() + "\n" + extra)

    return mutate


def prepend(extra):
    def mutate(p):
        p.write_text(extra + "\n" + p.read_text())

    return mutate


def put(name, content):
    """Write a table file beside the scenario (text or bytes)."""

    def mutate(p):
        f = p.parent / name
        if isinstance(content, bytes):
            f.write_bytes(content)
        else:
            f.write_text(content, encoding="utf-8")

    return mutate


def both(*mutations):
    def mutate(p):
        for m in mutations:
            m(p)

    return mutate


def frag_table(content, name="frag.csv"):
    """Replace the normal breach node by a table node reading ``content``."""
    return both(put(name, content), sub(FRAG_NODE, f'kind = "table"\n  table = "{name}"'))


def xlsx(rows, name="ensemble.xlsx", key_old='ensemble = "ensemble.csv"'):
    """Write an XLSX ensemble with openpyxl and point the scenario at it."""

    def mutate(p):
        import openpyxl

        wb = openpyxl.Workbook()
        ws = wb.active
        for r in rows:
            ws.append(list(r))
        wb.save(p.parent / name)
        sub(key_old, f'ensemble = "{name}"')(p)

    return mutate


def chain_include(p):
    """a.toml -> b.toml -> scenario.toml -> a.toml: an include loop through two other files."""
    (p.parent / "b.toml").write_text('base = "scenario.toml"\n')
    (p.parent / "a.toml").write_text('base = "b.toml"\n')
    prepend('base = "a.toml"')(p)


ENS_OK_ROWS = "2.5,0.25,0.1\n2.55,0.24,0.0\n"

# an F-N line entry and an alternative, to be completed by a case
GUIDE_LINE = "[[guidelines.fn_lines]]\nname = 'limit'\nsource = 'Agency X policy'\nanchor_n = 1.0\n"
ECON = "[economics]\nrate = 0.03\n"
ALT = "[[alternatives]]\nname = 'raise'\nfirst_cost = 1.0e6\n"

# (id, mutation, message regex): the regex names the file, the place and what was expected
CASES = [
    # --- hazard ensembles (CSV) ------------------------------------------------------------------
    ("ens-missing-file", sub('ensemble = "ensemble.csv"', 'ensemble = "gone.csv"'), r"gone\.csv: file not found"),
    (
        "ens-unknown-column",
        put("ensemble.csv", "mean,sd,skew,colour\n2.5,0.25,0.1,red\n"),
        r"ensemble\.csv, row 1, column 'colour': unknown column 'colour' in the lp3 ensemble; expected mean, sd, skew",
    ),
    (
        "ens-missing-column",
        put("ensemble.csv", "mean,sd\n2.5,0.25\n"),
        r"ensemble\.csv, row 1: missing column 'skew' in the lp3 ensemble; expected columns mean, sd, skew",
    ),
    (
        "ens-duplicate-column",
        put("ensemble.csv", "mean,sd,skew,sd\n2.5,0.25,0.1,0.2\n"),
        r"ensemble\.csv, row 1: column 'sd' appears twice",
    ),
    (
        "ens-blank-header",
        put("ensemble.csv", "mean,,skew\n2.5,0.25,0.1\n"),
        r"ensemble\.csv, row 1: header cell 2 is blank",
    ),
    (
        "ens-text-cell",
        put("ensemble.csv", "mean,sd,skew\n" + ENS_OK_ROWS + "2.6,wide,0.1\n"),
        r"ensemble\.csv, row 4, column 'sd': 'wide' is not a number; expected a number > 0",
    ),
    (
        "ens-empty-cell",
        put("ensemble.csv", "mean,sd,skew\n" + ENS_OK_ROWS + ",0.25,0.1\n"),
        r"ensemble\.csv, row 4, column 'mean': empty cell; expected a finite number",
    ),
    (
        "ens-empty-file",
        put("ensemble.csv", ""),
        r"ensemble\.csv: the lp3 ensemble is empty; expected a header row and at least one data row",
    ),
    ("ens-comments-only", put("ensemble.csv", "# nothing here\n\n"), r"ensemble\.csv: the lp3 ensemble is empty"),
    (
        "ens-header-only",
        put("ensemble.csv", "mean,sd,skew\n"),
        r"ensemble\.csv, row 1: the lp3 ensemble has a header but no data rows",
    ),
    (
        "ens-nan-cell",
        put("ensemble.csv", "mean,sd,skew\n" + ENS_OK_ROWS + "nan,0.25,0.1\n"),
        r"ensemble\.csv, row 4, column 'mean': 'nan' is not finite; expected a finite number",
    ),
    (
        "ens-inf-cell",
        put("ensemble.csv", "mean,sd,skew\n" + ENS_OK_ROWS + "2.5,0.25,-inf\n"),
        r"ensemble\.csv, row 4, column 'skew': '-inf' is not finite",
    ),
    (
        "ens-not-utf8",
        put("ensemble.csv", b"mean,sd,skew\n2.5,0.25,0.1\n2.5,0.25,0.1 \xe9t\xe9\n"),
        r"ensemble\.csv, row 3: byte 0xe9 is not UTF-8 text; save the file as UTF-8",
    ),
    (
        "ens-sd-zero",
        put("ensemble.csv", "mean,sd,skew\n" + ENS_OK_ROWS + "2.5,0,0.1\n"),
        r"ensemble\.csv, row 4, column 'sd': 0 must be greater than 0",
    ),
    (
        "ens-sd-negative",
        put("ensemble.csv", "mean,sd,skew\n2.5,-0.2,0.1\n"),
        r"ensemble\.csv, row 2, column 'sd': -0.2 must be greater than 0",
    ),
    (
        "ens-negative-weight",
        put("ensemble.csv", "mean,sd,skew,weight\n2.5,0.25,0.1,1\n2.5,0.25,0.1,-1\n"),
        r"ensemble\.csv, row 3, column 'weight': -1 must not be negative",
    ),
    (
        "ens-zero-weights",
        put("ensemble.csv", "mean,sd,skew,weight\n2.5,0.25,0.1,0\n2.5,0.25,0.1,0\n"),
        r"ensemble\.csv, column 'weight': all weights are zero; expected at least one positive weight",
    ),
    (
        "ens-long-row",
        put("ensemble.csv", "mean,sd,skew\n2.5,0.25,0.1,9\n"),
        r"ensemble\.csv, row 2: row has 4 cells but the header has 3",
    ),
    (
        "ens-nan-log-posterior",
        put("ensemble.csv", "mean,sd,skew,log_posterior\n2.5,0.25,0.1,NaN\n"),
        r"ensemble\.csv, row 2, column 'log_posterior': 'NaN' is not finite",
    ),
    (
        "ens-unknown-family",
        sub('family = "lp3"', 'family = "weibull"'),
        r"scenario\.toml, key 'hazard\.family': unknown family 'weibull'; expected one of lp3, gev",
    ),
    # --- hazard ensembles (curve tables) ---------------------------------------------------------
    (
        "curve-aep-above-1",
        both(
            sub('family = "lp3"', 'family = "table"'),
            put("ensemble.csv", "realization,aep,discharge_m3s\na,0.5,100\na,1.5,50\n"),
        ),
        r"ensemble\.csv, row 3, column 'aep': AEP 1\.5 is outside \(0, 1\)",
    ),
    (
        "curve-not-monotone",
        both(
            sub('family = "lp3"', 'family = "table"'),
            put("ensemble.csv", "realization,aep,discharge_m3s\na,0.5,100\na,0.01,90\n"),
        ),
        r"ensemble\.csv, row 3, column 'discharge_m3s': curve 'a' is not monotone: 90 at AEP 0\.01 is not above 100",
    ),
    (
        "curve-unit-mismatch",
        both(
            sub('family = "lp3"', 'family = "table"'),
            put("ensemble.csv", "realization,aep,discharge_cfs\na,0.5,100\na,0.01,900\n"),
        ),
        r"ensemble\.csv, row 1, column 'discharge_cfs': unit 'cfs' does not match the scenario's unit 'm3s'",
    ),
    (
        "curve-different-aeps",
        both(
            sub('family = "lp3"', 'family = "table"'),
            put("ensemble.csv", "realization,aep,discharge_m3s\na,0.5,100\na,0.01,900\nb,0.5,110\nb,0.02,800\n"),
        ),
        r"ensemble\.csv, row 4, column 'aep': realization 'b' does not give the same AEPs as realization 'a'",
    ),
    # --- hazard ensembles (XLSX) -----------------------------------------------------------------
    (
        "xlsx-text-cell",
        xlsx([("mean", "sd", "skew"), (2.5, 0.25, 0.1), (2.6, "wide", 0.1)]),
        r"ensemble\.xlsx, row 3, column 'sd': 'wide' is not a number",
    ),
    (
        "xlsx-header-only",
        xlsx([("mean", "sd", "skew")]),
        r"ensemble\.xlsx, row 1: the lp3 ensemble has a header but no data rows",
    ),
    # a spreadsheet error value and an infinity typed as text
    (
        "xlsx-error-cell",
        xlsx([("mean", "sd", "skew"), (2.5, 0.25, "#NUM!")]),
        r"ensemble\.xlsx, row 2, column 'skew': '#NUM!' is not a number",
    ),
    (
        "xlsx-inf-cell",
        xlsx([("mean", "sd", "skew"), (2.5, 0.25, 0.1), ("inf", 0.25, 0.1)]),
        r"ensemble\.xlsx, row 3, column 'mean': 'inf' is not finite",
    ),
    (
        "xlsx-negative-weight",
        xlsx([("mean", "sd", "skew", "weight"), (2.5, 0.25, 0.1, 1.0), (2.5, 0.25, 0.1, -2.0)]),
        r"ensemble\.xlsx, row 3, column 'weight': -2(\.0)? must not be negative",
    ),
    (
        "xlsx-damaged",
        both(
            put("ensemble.xlsx", b"PK\x03\x04 not really a workbook"),
            sub('ensemble = "ensemble.csv"', 'ensemble = "ensemble.xlsx"'),
        ),
        r"ensemble\.xlsx: is not a readable \.xlsx workbook",
    ),
    ("xlsx-missing", sub('ensemble = "ensemble.csv"', 'ensemble = "gone.xlsx"'), r"gone\.xlsx: file not found"),
    (
        "unsupported-extension",
        both(put("ensemble.ods", "x"), sub('ensemble = "ensemble.csv"', 'ensemble = "ensemble.ods"')),
        r"ensemble\.ods: unsupported file type '\.ods'; expected \.csv or \.xlsx",
    ),
    # --- rating tables ---------------------------------------------------------------------------
    ("rating-missing-file", sub('table = "rating.csv"', 'table = "nope.csv"'), r"nope\.csv: file not found"),
    (
        "rating-stage-not-increasing",
        put("rating.csv", "discharge_m3s,stage_m\n10,1.0\n100,2.0\n1000,1.5\n"),
        r"rating\.csv, row 4, column 'stage_m': stage 1\.5 is not above the previous row's 2; the rating table must "
        r"increase",
    ),
    (
        "rating-discharge-not-increasing",
        put("rating.csv", "discharge_m3s,stage_m\n10,1.0\n10,2.0\n"),
        r"rating\.csv, row 3, column 'discharge_m3s': discharge 10 is not above the previous row's 10",
    ),
    (
        "rating-one-row",
        put("rating.csv", "discharge_m3s,stage_m\n10,1.0\n"),
        r"rating\.csv, row 2: the rating table has one row; expected at least two",
    ),
    (
        "rating-header-only",
        put("rating.csv", "discharge_m3s,stage_m\n"),
        r"rating\.csv, row 1: the rating table has a header but no data rows",
    ),
    (
        "rating-unknown-column",
        put("rating.csv", "discharge_m3s,stage_m,gauge\n10,1,a\n100,2,b\n"),
        r"rating\.csv, row 1, column 'gauge': unknown column 'gauge' in the rating table; expected discharge, stage",
    ),
    (
        "rating-discharge-unit",
        put("rating.csv", "discharge_cfs,stage_m\n10,1.0\n100,2.0\n"),
        r"rating\.csv, row 1, column 'discharge_cfs': unit 'cfs' does not match the scenario's discharge unit 'm3s'",
    ),
    (
        "rating-stage-unit",
        put("rating.csv", "discharge_m3s,stage_ft\n10,1.0\n100,2.0\n"),
        r"rating\.csv, row 1, column 'stage_ft': unit 'ft' does not match the scenario's stage unit 'm'",
    ),
    (
        "rating-negative-discharge",
        put("rating.csv", "discharge_m3s,stage_m\n-10,1.0\n100,2.0\n"),
        r"rating\.csv, row 2, column 'discharge_m3s': -10 must be greater than 0",
    ),
    (
        "rating-inf-stage",
        put("rating.csv", "discharge_m3s,stage_m\n10,1.0\n100,inf\n"),
        r"rating\.csv, row 3, column 'stage_m': 'inf' is not finite",
    ),
    (
        "rating-negative-sd-column",
        put("rating.csv", "discharge_m3s,stage_m,stage_sd_m\n10,1.0,0.1\n100,2.0,-0.1\n"),
        r"rating\.csv, row 3, column 'stage_sd_m': -0\.1 must not be negative",
    ),
    (
        "rating-negative-natural-sd",
        sub('table = "rating.csv"', 'table = "rating.csv"\nnatural_sd = -0.2'),
        r"scenario\.toml, key 'rating\.natural_sd': -0\.2 is negative; expected a standard deviation >= 0",
    ),
    (
        "rating-bad-extrapolation",
        sub('table = "rating.csv"', 'table = "rating.csv"\nextrapolation = "guess"'),
        r"scenario\.toml, key 'rating\.extrapolation': 'guess' is not refuse or extend",
    ),
    # the grid spans the ensemble from AEP 0.999 to 1e-7; a short table with "refuse" cannot cover it
    (
        "grid-not-covered",
        both(
            put("rating.csv", "discharge_m3s,stage_m\n100,2.0\n1000,4.0\n"),
            sub('table = "rating.csv"', 'table = "rating.csv"\nextrapolation = "refuse"'),
        ),
        r"rating\.csv, key 'rating\.extrapolation': the rating table covers 100 to 1000 but the hazard grid runs from "
        r"\S+ to \S+; extend the table or set extrapolation = \"extend\"",
    ),
    # --- fragility -------------------------------------------------------------------------------
    (
        "frag-probability-above-1",
        frag_table("stage_m,probability\n1,0\n2,1.2\n"),
        r"frag\.csv, row 3, column 'probability': 1\.2 is outside \[0\.0, 1\.0\]",
    ),
    (
        "frag-probability-negative",
        frag_table("stage_m,probability\n1,-0.1\n2,1\n"),
        r"frag\.csv, row 2, column 'probability': -0\.1 is outside \[0\.0, 1\.0\]",
    ),
    (
        "frag-decreasing",
        frag_table("stage_m,probability\n1,0\n2,0.6\n3,0.4\n"),
        r"frag\.csv, row 4, column 'probability': probability 0\.4 is below the previous row's 0\.6",
    ),
    (
        "frag-stage-not-increasing",
        frag_table("stage_m,probability\n1,0\n1,0.6\n"),
        r"frag\.csv, row 3, column 'stage_m': stage 1 is not above the previous row's 1",
    ),
    (
        "frag-one-row",
        frag_table("stage_m,probability\n1,0\n"),
        r"frag\.csv, row 2: the fragility table has one row; expected at least two",
    ),
    (
        "frag-unit-mismatch",
        frag_table("stage_ft,probability\n1,0\n2,1\n"),
        r"frag\.csv, row 1, column 'stage_ft': unit 'ft' does not match the scenario's stage unit 'm'",
    ),
    (
        "frag-unknown-column",
        frag_table("stage_m,probability,note\n1,0,a\n2,1,b\n"),
        r"frag\.csv, row 1, column 'note': unknown column 'note' in the fragility table",
    ),
    ("frag-missing-file", sub(FRAG_NODE, 'kind = "table"\n  table = "nowhere.csv"'), r"nowhere\.csv: file not found"),
    (
        "frag-spread-zero",
        sub("spread = 0.5", "spread = 0.0"),
        r"scenario\.toml, key 'failure_modes\[1\]\.nodes\[1\]': fragility spread must be > 0",
    ),
    (
        "frag-missing-median",
        sub("median = 5.0\n", ""),
        r"scenario\.toml, key 'failure_modes\[1\]\.nodes\[1\]\.median': missing required key",
    ),
    (
        "frag-unknown-kind",
        sub('kind = "normal"', 'kind = "weibull"'),
        r"scenario\.toml, key 'failure_modes\[1\]\.nodes\[1\]\.kind': 'weibull' is not normal, lognormal or table",
    ),
    (
        "frag-median-text",
        sub("median = 5.0", 'median = "five"'),
        r"scenario\.toml, key 'failure_modes\[1\]\.nodes\[1\]\.median': expected a number, got text 'five'",
    ),
    (
        "frag-nan-median",
        sub("median = 5.0", "median = nan"),
        r"scenario\.toml, key 'failure_modes\[1\]\.nodes\[1\]\.median': nan is not finite",
    ),
    (
        "duplicate-mode-names",
        sub(
            "[consequences]",
            '[[failure_modes]]\nname = "breach"\n  [[failure_modes.nodes]]\n'
            '  kind = "normal"\n  median = 6.0\n  spread = 0.5\n[consequences]',
        ),
        r"scenario\.toml, key 'failure_modes\[2\]\.name': failure-mode name 'breach' is used twice .*; names must be "
        r"unique",
    ),
    (
        "negative-shift-sd",
        sub('name = "breach"', 'name = "breach"\nshift_sd = -1.0'),
        r"scenario\.toml, key 'failure_modes\[1\]\.shift_sd': -1\.0 is negative; expected a standard deviation >= 0",
    ),
    # --- consequence tables ----------------------------------------------------------------------
    (
        "cons-negative-damage",
        put("consequences.csv", "stage_m,damage_breach_usd\n1,0\n2,-5\n"),
        r"consequences\.csv, row 3, column 'damage_breach_usd': -5 must not be negative",
    ),
    (
        "cons-negative-life-loss",
        put("consequences.csv", "stage_m,life_loss_breach\n1,0\n2,-1\n"),
        r"consequences\.csv, row 3, column 'life_loss_breach': -1 must not be negative",
    ),
    (
        "cons-currency-mismatch",
        put("consequences.csv", "stage_m,damage_breach_eur\n1,0\n2,5\n"),
        r"consequences\.csv, row 1, column 'damage_breach_eur': currency 'eur' does not match the scenario's "
        r"currency 'usd'",
    ),
    (
        "cons-stage-unit-mismatch",
        put("consequences.csv", "stage_ft,damage_breach_usd\n1,0\n2,5\n"),
        r"consequences\.csv, row 1, column 'stage_ft': unit 'ft' does not match the scenario's stage unit 'm'",
    ),
    (
        "cons-no-consequence-column",
        put("consequences.csv", "stage_m\n1\n2\n"),
        r"consequences\.csv, row 1: the consequence table has no consequence column",
    ),
    (
        "cons-unknown-column",
        put("consequences.csv", "stage_m,damage_breach_usd,houses\n1,0,3\n2,5,4\n"),
        r"consequences\.csv, row 1, column 'houses': unknown column 'houses' in the consequence table",
    ),
    (
        "cons-fatality-rate-above-1",
        put("consequences.csv", "stage_m,population_at_risk,fatality_rate_breach\n1,100,0\n2,100,1.5\n"),
        r"consequences\.csv, row 3, column 'fatality_rate_breach': 1\.5 is outside \[0\.0, 1\.0\]",
    ),
    (
        "cons-nan-damage",
        put("consequences.csv", "stage_m,damage_breach_usd\n1,0\n2,NaN\n"),
        r"consequences\.csv, row 3, column 'damage_breach_usd': 'NaN' is not finite",
    ),
    (
        "cons-stage-not-increasing",
        put("consequences.csv", "stage_m,damage_breach_usd\n2,0\n1,5\n"),
        r"consequences\.csv, row 3, column 'stage_m': stage 1 is not above the previous row's 2",
    ),
    (
        "cons-header-only",
        put("consequences.csv", "stage_m,damage_breach_usd\n"),
        r"consequences\.csv, row 1: the consequence table has a header but no data rows",
    ),
    (
        "cons-not-utf8",
        put("consequences.csv", b"stage_m,damage_breach_usd\n1,0\n2,5\xff\n"),
        r"consequences\.csv, row 3: byte 0xff is not UTF-8 text",
    ),
    (
        "cons-bad-multiplier",
        append('[consequences.damage_multiplier]\ndistribution = "triangular"\nlow = 2.0\nmode = 1.0\nhigh = 3.0\n'),
        r"scenario\.toml, key 'consequences\.damage_multiplier': a triangular multiplier needs 0 <= low <= mode <= high",
    ),
    # --- scenario files --------------------------------------------------------------------------
    ("scenario-missing", None, r"absent\.toml: scenario file not found"),
    (
        "scenario-not-utf8",
        lambda p: p.write_bytes(p.read_bytes().replace(b'"test scenario"', b'"caf\xe9"')),
        r"scenario\.toml, row 2: byte 0xe9 is not UTF-8 text",
    ),
    ("scenario-not-toml", lambda p: p.write_text("title = \n"), r"scenario\.toml: is not valid TOML"),
    (
        "scenario-unknown-top-key",
        prepend("colour = 'blue'"),
        r"scenario\.toml, key 'colour': unknown key; expected one of",
    ),
    (
        "scenario-unknown-section-key",
        append("[grid]\npoints = 100\nspacing = 'odd'\n"),
        r"scenario\.toml, key 'grid\.spacing': unknown key; expected one of aep_max, aep_min, max_points, min_points, points, rule, target_error",
    ),
    (
        "scenario-wrong-type",
        sub("seed = 42", 'seed = "forty-two"'),
        r"scenario\.toml, key 'seed': expected an integer, got text 'forty-two'",
    ),
    (
        "scenario-bool-for-int",
        sub("seed = 42", "seed = true"),
        r"scenario\.toml, key 'seed': expected an integer, got true or false True",
    ),
    (
        "scenario-missing-required",
        sub('family = "lp3"\n', ""),
        r"scenario\.toml, key 'hazard\.family': missing required key",
    ),
    (
        "scenario-no-failure-modes",
        sub("[[failure_modes]]", "[[other_modes]]"),
        r"scenario\.toml, key 'other_modes': unknown key",
    ),
    (
        "scenario-design-aep-above-1",
        append("[checks]\ndesign_aep = 1.5\n"),
        r"scenario\.toml, key 'checks\.design_aep': 1\.5 is outside \(0, 1\); expected a probability",
    ),
    (
        "scenario-aep-min-zero",
        append("[grid]\naep_min = 0.0\n"),
        r"scenario\.toml, key 'grid\.aep_min': 0\.0 is outside \(0, 1\); expected a probability",
    ),
    (
        "scenario-aep-min-above-max",
        append("[grid]\naep_min = 0.5\naep_max = 0.1\n"),
        r"scenario\.toml, key 'grid\.aep_min': 0\.5 must be below grid\.aep_max = 0\.1",
    ),
    (
        "scenario-too-few-points",
        append("[grid]\npoints = 3\n"),
        r"scenario\.toml, key 'grid\.points': 3 is outside 50 to 200000",
    ),
    (
        "scenario-bad-units",
        sub('discharge = "m3s"', 'discharge = "gpm"'),
        r"scenario\.toml, key 'units\.discharge': 'gpm' is not m3s or cfs",
    ),
    (
        "scenario-negative-seed",
        sub("seed = 42", "seed = -1"),
        r"scenario\.toml, key 'seed': -1 is negative; expected an integer >= 0",
    ),
    (
        "scenario-mode-unknown-parameter",
        append("[hazard.mode]\nmean = 2.5\nsd = 0.25\nskew = 0.1\nshape = 1.0\n"),
        r"scenario\.toml, key 'hazard\.mode\.shape': unknown parameter; expected mean, sd, skew",
    ),
    (
        "scenario-base-missing",
        prepend('base = "elsewhere.toml"'),
        r"scenario\.toml, key 'base': base scenario 'elsewhere\.toml' not found",
    ),
    (
        "scenario-includes-itself",
        prepend('base = "scenario.toml"'),
        r"scenario\.toml, key 'base': the scenario includes itself through 'base' \(scenario\.toml -> scenario\.toml\)",
    ),
    (
        "scenario-include-chain",
        chain_include,
        r"scenario\.toml, key 'base': the scenario includes itself through 'base' "
        r"\(scenario\.toml -> a\.toml -> b\.toml -> scenario\.toml\)",
    ),
    # these four were accepted (or reported at the wrong place) before the corpus found them
    (
        "duplicate-mode-names-as-columns",
        sub(
            "[consequences]",
            '[[failure_modes]]\nname = "Breach"\n'
            '  [[failure_modes.nodes]]\n  kind = "normal"\n  median = 6.0\n'
            "  spread = 0.5\n[consequences]",
        ),
        r"scenario\.toml, key 'failure_modes\[2\]\.name': failure-mode name 'Breach' is used twice",
    ),
    (
        "empty-table-path",
        sub('ensemble = "ensemble.csv"', 'ensemble = ""'),
        r"scenario\.toml, key 'hazard\.ensemble': is empty; expected the name of a \.csv or \.xlsx table",
    ),
    (
        "mode-sd-negative",
        append("[hazard.mode]\nmean = 2.5\nsd = -0.2\nskew = 0.0\n"),
        r"scenario\.toml, key 'hazard\.mode\.sd': -0\.2 must be greater than 0",
    ),
    (
        "workers-negative",
        append("[uncertainty]\nworkers = -3\n"),
        r"scenario\.toml, key 'uncertainty\.workers': -3 is negative",
    ),
    (
        "ens-overflows",
        put("ensemble.csv", "mean,sd,skew\n400,0.1,0\n"),
        r"ensemble\.csv: the ensemble's quantities between AEP 0\.999 and 1e-07 are not finite numbers",
    ),
    (
        "scenario-draws-zero",
        append("[uncertainty]\ndraws_per_realization = 0\n"),
        r"scenario\.toml, key 'uncertainty\.draws_per_realization': 0 is outside 1 to 10000; expected a number of "
        r"response draws",
    ),
    # --- optional sections: refused when the scenario is loaded, before the Monte Carlo ----------
    (
        "sensitivity-misspelt-key",
        append("[sensitivity]\nenabled = true\nsecond_ordr = true\n"),
        r"scenario\.toml, key 'sensitivity\.second_ordr': unknown key; expected one of conf_level, enabled",
    ),
    (
        "sensitivity-n-not-power-of-two",
        append("[sensitivity]\nn = 1000\n"),
        r"scenario\.toml, key 'sensitivity\.n': 1000 is not a power of two; expected a power of two >= 16",
    ),
    (
        "sensitivity-unknown-factor",
        append("[sensitivity]\nexclude = ['rating_offset']\n"),
        r"scenario\.toml, key 'sensitivity\.exclude': 'rating_offset' is not an active factor of this scenario; "
        r"expected one of hazard_realization",
    ),
    (
        "guidelines-misspelt-key",
        append("[guidelines]\ntitle = 'Agency X'\n"),
        r"scenario\.toml, key 'guidelines\.title': unknown key; expected one of fn_lines, include",
    ),
    (
        "guidelines-line-misspelt-key",
        append(GUIDE_LINE + "anchorf = 1e-3\n"),
        r"scenario\.toml, key 'guidelines\.fn_lines\[0\]\.anchorf': unknown key; expected one of anchor_f, anchor_n",
    ),
    (
        "guidelines-line-probability-above-1",
        append(GUIDE_LINE + "anchor_f = 2.0\n"),
        r"scenario\.toml, key 'guidelines\.fn_lines\[0\]\.anchor_f': 2\.0 is outside \(0, 1\]; expected a positive "
        r"annual probability",
    ),
    (
        "guidelines-unknown-default-set",
        append("[guidelines]\ninclude = ['usace']\n"),
        r"scenario\.toml, key 'guidelines\.include\[0\]': 'usace' is not usace_2014, usbr_2011, ancold_2003 or usace_levee",
    ),
    (
        "economics-misspelt-key",
        append("[economics]\nrate = 0.03\nperiod = 50\n"),
        r"scenario\.toml, key 'economics\.period': unknown key; expected one of base_year, future, period_years, rate",
    ),
    (
        "economics-future-misspelt-key",
        append("[economics]\nrate = 0.03\nbase_year = 2030\n[economics.future]\nyear = 2070\ndamage_factr = 1.2\n"),
        r"scenario\.toml, key 'economics\.future\.damage_factr': unknown key; expected one of consequences",
    ),
    (
        "economics-future-short-ensemble",
        both(
            put("short.csv", "mean,sd,skew\n2.5,0.25,0.0\n"),
            append(
                "[economics]\nrate = 0.03\nbase_year = 2030\n[economics.future]\nyear = 2070\n"
                "hazard = { ensemble = 'short.csv' }\n"
            ),
        ),
        r"scenario\.toml, key 'economics\.future\.hazard\.ensemble': the future ensemble has 1 realizations but the "
        r"base has 200",
    ),
    (
        "alternative-misspelt-key",
        append(ALT + "anual_om = 1.0e4\n"),
        r"scenario\.toml, key 'alternatives\[1\]\.anual_om': unknown key; expected one of annual_om",
    ),
    (
        "alternative-without-economics",
        append(ALT),
        r"scenario\.toml, key 'economics\.rate': missing required key; expected the discount rate",
    ),
    (
        "alternative-changes-the-hazard",
        append(ECON + ALT + "[alternatives.hazard]\nfamily = 'gev'\n"),
        r"scenario\.toml, key 'alternatives\[1\]\.hazard': an alternative shares the base's hazard",
    ),
    (
        "alternative-bad-node-kind",
        append(
            ECON + ALT + "[[alternatives.failure_modes]]\nname = 'breach'\n"
            "  [[alternatives.failure_modes.nodes]]\n  kind = 'weibull'\n"
        ),
        r"scenario\.toml, key 'alternatives\[1\]\.failure_modes\[1\]\.nodes\[1\]\.kind': 'weibull' is not normal, "
        r"lognormal or table",
    ),
    (
        "alternative-missing-table",
        append(ECON + ALT + "[alternatives.consequences]\ntable = 'gone.csv'\n"),
        r"gone\.csv, key 'alternatives\[1\]': file not found",
    ),
    (
        "alternative-future-misspelt-key",
        append(ECON + ALT + "[alternatives.future]\nconsequence = {}\n"),
        r"scenario\.toml, key 'alternatives\[1\]\.future\.consequence': unknown key; expected one of consequences",
    ),
    (
        "alternative-future-bad-node",
        append(
            "[economics]\nrate = 0.03\nbase_year = 2030\n[economics.future]\nyear = 2070\n"
            + ALT
            + "[[alternatives.future.failure_modes]]\nname = 'breach'\n  [[alternatives.future.failure_modes.nodes]]\n"
            "  kind = 'normal'\n  median = 5.0\n"
        ),
        r"scenario\.toml, key 'alternatives\[1\]\.future\.failure_modes\[1\]\.nodes\[1\]\.spread': missing required "
        r"key",
    ),
    (
        "economics-future-bad-consequences",
        append(
            "[economics]\nrate = 0.03\nbase_year = 2030\n[economics.future]\nyear = 2070\n"
            "consequences = { damage_multiplier = { distribution = 'uniform' } }\n" + ALT
        ),
        r"scenario\.toml, key 'economics\.future\.consequences\.damage_multiplier\.distribution': 'uniform' is not "
        r"fixed, triangular or lognormal",
    ),
    (
        "checks-misspelt-key",
        append("[checks]\ndesign_aep = 0.01\nyear = 50\n"),
        r"scenario\.toml, key 'checks\.year': unknown key; expected one of crest_stage, design_aep, years",
    ),
    (
        "outputs-misspelt-key",
        append("[outputs]\nfigure = false\n"),
        r"scenario\.toml, key 'outputs\.figure': unknown key; expected one of figures, memo",
    ),
    (
        "units-misspelt-key",
        sub('currency = "usd"', 'currency = "usd"\ncurency = "eur"'),
        r"scenario\.toml, key 'units\.curency': unknown key; expected one of currency, discharge, stage",
    ),
    (
        "uncertainty-misspelt-key",
        append("[uncertainty]\ndraws = 4\n"),
        r"scenario\.toml, key 'uncertainty\.draws': unknown key; expected one of draws_per_realization",
    ),
    # --- [hazard] fit = {...}: a fitted ensemble (docs/fitting.md) ---------------------------------
    (
        "hazard-fit-and-ensemble",
        sub('ensemble = "ensemble.csv"', 'ensemble = "ensemble.csv"\nfit = { peaks = "peaks.csv", family = "lp3" }'),
        r"scenario\.toml, key 'hazard\.ensemble': give either an ensemble file or a fit table, not both",
    ),
    (
        "hazard-fit-bad-shape-prior",
        sub('ensemble = "ensemble.csv"', 'fit = { peaks = "peaks.csv", family = "lp3", shape_prior = "wide" }'),
        r"scenario\.toml, key 'hazard\.fit\.shape_prior': 'wide' is not geophysical or flat",
    ),
    (
        "hazard-fit-peaks-duplicate-year",
        both(
            put(
                "peaks.csv",
                "year,peak_m3s\n" + "".join(f"{1990 + i},{100 + 9 * i}\n" for i in range(12)) + "1995,500\n",
            ),
            sub('ensemble = "ensemble.csv"', 'fit = { peaks = "peaks.csv", family = "lp3" }'),
        ),
        r"peaks\.csv, row 14, column 'year': year 1995 appears twice \(also row 7\)",
    ),
    (
        "hazard-fit-peaks-missing-file",
        sub('ensemble = "ensemble.csv"', 'fit = { peaks = "gone.csv", family = "lp3" }'),
        r"gone\.csv: file not found",
    ),
]


def run_cli(argv, capsys):
    with pytest.raises(SystemExit) as info:
        main([str(a) for a in argv])
    cap = capsys.readouterr()
    return info.value.code, cap.out, cap.err


def leftovers(folder: Path):
    return sorted(p.name for p in folder.iterdir() if ".partial-" in p.name or ".old-" in p.name)


def test_corpus_is_large_and_ids_unique():
    ids = [c[0] for c in CASES]
    assert len(ids) >= 40 and len(set(ids)) == len(ids)


@pytest.mark.parametrize("label,mutate,message", CASES, ids=[c[0] for c in CASES])
def test_bad_input_exit_2_one_line_nothing_written(scenario_factory, tmp_path, capsys, label, mutate, message):
    import re

    path = scenario_factory(folder="sc")
    if mutate is None:
        path = path.parent / "absent.toml"
    else:
        mutate(path)
    out = tmp_path / "results"
    code, stdout, err = run_cli(["run", path, "--out", out], capsys)
    assert code == 2, (stdout, err)
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1 and err.endswith("\n"), err
    assert lines[0].startswith("riskcalc: error: "), err
    assert re.search(message, lines[0]), lines[0]
    assert not out.exists()
    assert leftovers(tmp_path) == []


SUBPROCESS_CASES = [
    "ens-not-utf8",
    "ens-overflows",
    "scenario-include-chain",
    "grid-not-covered",
    "xlsx-text-cell",
    "cons-negative-damage",
    "rating-stage-not-increasing",
]


@pytest.mark.skipif(not RISKCALC.exists(), reason="needs the installed .venv/bin/riskcalc")
@pytest.mark.parametrize("label", SUBPROCESS_CASES)
def test_installed_command_fails_cleanly(scenario_factory, tmp_path, label):
    import re

    case = {c[0]: c for c in CASES}[label]
    path = scenario_factory(folder="sc")
    case[1](path)
    out = tmp_path / "results"
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONWARNINGS",)}
    proc = subprocess.run(
        [str(RISKCALC), "run", str(path), "--out", str(out)], capture_output=True, text=True, env=env, timeout=120
    )
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr
    lines = proc.stderr.splitlines()
    assert len(lines) == 1 and re.search(case[2], lines[0]), proc.stderr
    assert not out.exists() and leftovers(tmp_path) == []


def test_check_command_agrees_with_run(scenario_factory, capsys):
    # `check` validates without computing: the same file-level cases fail there with the same line
    for label in ("ens-nan-cell", "frag-decreasing", "scenario-includes-itself"):
        case = {c[0]: c for c in CASES}[label]
        path = scenario_factory(folder=label)
        case[1](path)
        code, _, err = run_cli(["check", path], capsys)
        assert code == 2 and len(err.splitlines()) == 1, err
        import re

        assert re.search(case[2], err), err


def test_python_minus_o_still_validates(scenario_factory, tmp_path):
    # validation must not rely on assert (skipped under python -O); style guide, "Error policy"
    path = scenario_factory(folder="sc")
    put("ensemble.csv", "mean,sd,skew\n2.5,-0.2,0.1\n")(path)
    code = (
        "import sys; from riskcalc.config.scenario import load_scenario\n"
        "from riskcalc.errors import InputError\n"
        f"try:\n    load_scenario({str(path)!r})\nexcept InputError as e:\n    print(e); sys.exit(2)\n"
    )
    proc = subprocess.run([sys.executable, "-O", "-c", code], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2 and "must be greater than 0" in proc.stdout
