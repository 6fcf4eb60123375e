"""Bad ensemble tables fail with one line naming the file, row and column."""

import numpy as np
import pytest

from riskcalc.errors import InputError
from riskcalc.hazard import read_curve_table, read_ensemble, read_parameter_ensemble

GOOD = "mean,sd,skew,weight\n2.5,0.2,0.1,1\n2.6,0.25,-0.1,2\n"


def write(tmp_path, text, name="ens.csv", mode="w"):
    p = tmp_path / name
    if isinstance(text, bytes):
        p.write_bytes(text)
    else:
        p.write_text(text, encoding="utf-8")
    return p


def test_good_parameter_table(tmp_path):
    ens = read_parameter_ensemble(write(tmp_path, GOOD), "lp3")
    assert ens.size == 2
    np.testing.assert_allclose(ens.weights, [1 / 3, 2 / 3])
    assert ens.log_posterior is None


def test_xlsx_parameter_table(tmp_path):
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["location", "scale", "shape", "log_posterior"])
    ws.append([400.0, 150.0, -0.1, -3.0])
    ws.append([420.0, 140.0, 0.05, -2.0])
    path = tmp_path / "ens.xlsx"
    wb.save(path)
    ens = read_ensemble(path, "gev")
    assert ens.size == 2 and ens.log_posterior[1] == -2.0
    ws.append([410.0, "wide", 0.0])
    wb.save(path)
    with pytest.raises(InputError, match=r"ens.xlsx, row 4, column 'scale': 'wide' is not a number"):
        read_ensemble(path, "gev")


BAD = [
    ("empty file", "", "lp3", r"ens.csv: the lp3 ensemble is empty"),
    ("header only", "mean,sd,skew\n", "lp3", r"ens.csv, row 1: the lp3 ensemble has a header but no data rows"),
    ("missing column", "mean,sd\n2.5,0.2\n", "lp3", r"ens.csv, row 1: missing column 'skew'"),
    ("unknown column", "mean,sd,skew,colour\n2.5,0.2,0.1,red\n", "lp3", r"row 1, column 'colour': unknown column"),
    (
        "text cell",
        "mean,sd,skew\n2.5,0.2,0.1\n2.6,abc,0.1\n",
        "lp3",
        r"ens.csv, row 3, column 'sd': 'abc' is not a number",
    ),
    ("nan cell", "mean,sd,skew\n2.5,0.2,nan\n", "lp3", r"row 2, column 'skew': 'nan' is not finite"),
    ("inf cell", "mean,sd,skew\n2.5,0.2,inf\n", "lp3", r"row 2, column 'skew': 'inf' is not finite"),
    ("blank cell", "mean,sd,skew\n2.5,,0.1\n", "lp3", r"row 2, column 'sd': empty cell"),
    ("sd zero", "mean,sd,skew\n2.5,0,0.1\n", "lp3", r"row 2, column 'sd': 0 must be greater than 0"),
    (
        "scale negative",
        "location,scale,shape\n400,-3,0.1\n",
        "gev",
        r"row 2, column 'scale': -3 must be greater than 0",
    ),
    (
        "negative weight",
        "mean,sd,skew,weight\n2.5,0.2,0.1,1\n2.5,0.2,0.1,-1\n",
        "lp3",
        r"row 3, column 'weight': -1 must not be negative",
    ),
    (
        "all-zero weights",
        "mean,sd,skew,weight\n2.5,0.2,0.1,0\n2.5,0.2,0.1,0\n",
        "lp3",
        r"column 'weight': all weights are zero",
    ),
    ("unknown family", GOOD, "weibull", r"ens.csv: unknown family 'weibull'"),
    ("duplicate column", "mean,sd,sd,skew\n2.5,0.2,0.2,0.1\n", "lp3", r"row 1: column 'sd' appears twice"),
    ("long row", "mean,sd,skew\n2.5,0.2,0.1,9\n", "lp3", r"row 2: row has 4 cells but the header has 3"),
    ("non-utf8", b"mean,sd,skew\n2.5,0.2,0.1\n2.5,0.2,\xff\n", "lp3", r"row 3: byte 0xff is not UTF-8"),
]


@pytest.mark.parametrize("label,text,family,message", BAD, ids=[b[0] for b in BAD])
def test_bad_parameter_tables(tmp_path, label, text, family, message):
    path = write(tmp_path, text)
    with pytest.raises(InputError, match=message) as info:
        read_ensemble(path, family)
    assert "\n" not in str(info.value)


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match=r"nowhere.csv: file not found"):
        read_ensemble(tmp_path / "nowhere.csv", "lp3")


CURVE = """realization,aep,discharge_m3s,weight
a,0.5,100,1
a,0.1,200,1
a,0.01,400,1
b,0.5,120,3
b,0.1,230,3
b,0.01,470,3
"""


def test_good_curve_table(tmp_path):
    ens = read_curve_table(write(tmp_path, CURVE))
    assert ens.size == 2 and ens.unit == "m3s" and ens.quantity == "discharge"
    np.testing.assert_allclose(ens.weights, [0.25, 0.75])
    np.testing.assert_allclose(ens.aep(np.array([200.0]))[0], [0.1], rtol=1e-12)
    np.testing.assert_allclose(ens.quantile(np.array([0.01]))[:, 0], [400, 470], rtol=1e-12)


BAD_CURVES = [
    (
        "not monotone",
        CURVE.replace("a,0.01,400", "a,0.01,150"),
        r"row 4, column 'discharge_m3s': curve 'a' is not monotone",
    ),
    ("aep out of range", CURVE.replace("b,0.01,470", "b,1.5,470"), r"row 7, column 'aep': AEP 1.5 is outside \(0, 1\)"),
    ("different aeps", CURVE.replace("b,0.01,470", "b,0.02,470"), r"realization 'b' does not give the same AEPs"),
    ("weight changes", CURVE.replace("b,0.1,230,3", "b,0.1,230,4"), r"column 'weight': weight changes within"),
    ("no quantity", "realization,aep,flow\na,0.5,100\n", r"row 1: missing the quantity column"),
    ("negative discharge", CURVE.replace("a,0.5,100", "a,0.5,-100"), r"row 2, column 'discharge_m3s': -100 must be"),
]


@pytest.mark.parametrize("label,text,message", BAD_CURVES, ids=[b[0] for b in BAD_CURVES])
def test_bad_curve_tables(tmp_path, label, text, message):
    with pytest.raises(InputError, match=message):
        read_curve_table(write(tmp_path, text))


def test_curve_table_unit_mismatch(tmp_path):
    with pytest.raises(InputError, match=r"unit 'm3s' does not match the scenario's unit 'cfs'"):
        read_curve_table(write(tmp_path, CURVE), unit="cfs")
