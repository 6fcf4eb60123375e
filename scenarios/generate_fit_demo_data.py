"""Regenerate the invented annual-peak record of the Wrenstow Dam fit demo.

Everything here is invented: the Fennick River, the Wrenstow Dam and the hamlet of
Marrick Ford below it do not exist. The record is a synthetic sample from a chosen GEV
distribution (scipy's ``genextreme`` with shape c = -0.1, heavy-tailed in the hydrology
sign), laid out as an analyst would receive it:

* a systematic gauge record, 1961-2024, except 1987, when the gauge was lost and the peak
  is known only to lie in an interval;
* a historical period, 1870-1960, with a perception threshold of 900 m3/s (floods above
  it are remembered from flood marks); the years above it are listed, the largest only as
  "above" a level (its flood mark is partly lost: an interval with no upper bound).

Run ``python scenarios/generate_fit_demo_data.py`` from the project root; it writes
``peaks.csv`` and ``thresholds.csv`` into ``scenarios/wrenstow_dam_fit/`` and is deterministic.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from scipy import stats

HERE = Path(__file__).resolve().parent / "wrenstow_dam_fit"

TRUE = {"c": -0.1, "loc": 380.0, "scale": 130.0}
SYSTEMATIC = (1961, 2024)
HISTORICAL = (1870, 1960)
THRESHOLD = 900.0
LOST_YEAR = 1987


def record(seed=20261202):
    rng = np.random.default_rng(seed)
    years = np.arange(HISTORICAL[0], SYSTEMATIC[1] + 1)
    peaks = stats.genextreme.rvs(TRUE["c"], loc=TRUE["loc"], scale=TRUE["scale"], size=years.size, random_state=rng)
    hist = years <= HISTORICAL[1]
    largest = years[hist][np.argmax(peaks[hist])]
    rows = []
    for y, q in zip(years, peaks):
        if y <= HISTORICAL[1]:
            if q < THRESHOLD:
                continue  # below the perception threshold: not remembered
            if y == largest:  # known only to have exceeded a level
                rows.append((int(y), "", f"{100 * np.floor(q / 100):.0f}", ""))
                continue
            rows.append((int(y), f"{q:.0f}", "", ""))
        elif y == LOST_YEAR:
            lo, hi = 50 * np.floor(q * 0.8 / 50), 50 * np.ceil(q * 1.25 / 50)
            rows.append((int(y), "", f"{lo:.0f}", f"{hi:.0f}"))
        else:
            rows.append((int(y), f"{q:.0f}", "", ""))
    return rows


def main():
    HERE.mkdir(exist_ok=True)
    rows = record()
    with open(HERE / "peaks.csv", "w", encoding="utf-8", newline="\n") as fh:
        fh.write("# INVENTED DATA for the riskcalc demo: annual peak inflow to Wrenstow Dam on the Fennick River\n")
        fh.write("# (a fictional dam and river) [m3/s]. Systematic gauge 1961-2024; 1987 gauge lost: an interval.\n")
        fh.write(
            "# 1870-1960: only floods above the perception threshold in thresholds.csv are listed (flood marks).\n"
        )
        fh.write("# A blank peak_upper means no upper bound. Regenerate: python scenarios/generate_fit_demo_data.py\n")
        fh.write("year,peak_m3s,peak_lower_m3s,peak_upper_m3s\n")
        for r in rows:
            fh.write(",".join(str(v) for v in r) + "\n")
    with open(HERE / "thresholds.csv", "w", encoding="utf-8", newline="\n") as fh:
        fh.write("# INVENTED DATA for the riskcalc demo (Wrenstow Dam, fictional): in 1870-1960 every flood above\n")
        fh.write("# the threshold is known; the other years of the period had smaller floods.\n")
        fh.write("start_year,end_year,threshold_m3s\n")
        fh.write(f"{HISTORICAL[0]},{HISTORICAL[1]},{THRESHOLD:.0f}\n")


if __name__ == "__main__":
    main()
