#!/usr/bin/env python3
"""Reference for `smoothing` with `select: aicc` (AICc over the trend x season grid).

Generator: statsmodels 0.14.4. For every series of smoothing_reference.json
(written by generate_smoothing.py) and every form fitted there, this takes
statsmodels' best log-likelihood over the recorded starts ("best" of that
file), the form's number of estimated parameters as statsmodels counts it
(`ETSModel(...).fit().df_model`: free parameters plus one for sigma^2) and
its AICc by `statsmodels.tools.eval_measures.aicc(llf, nobs, df_model)`
(statsmodels counts m initial seasonal states; outturn, whose seasonal
states are normalised, m - 1: the Rust test says how it compares);
then the form with the smallest AICc per series and the margin to the
runner-up.

Run:  python3 generate_select.py   (reads smoothing_reference.json, writes
      select_reference.json beside it)
"""
import json
import os
import warnings

import numpy as np
import pandas as pd
import statsmodels
from statsmodels.tools.eval_measures import aicc
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

warnings.simplefilter("ignore")
HERE = os.path.dirname(os.path.abspath(__file__))


def main():
    with open(os.path.join(HERE, "smoothing_reference.json")) as f:
        ref = json.load(f)
    series = {}
    for case in ref["cases"]:
        if case["season"] == "multiplicative" or case["period"] == 52:
            # multiplicative seasons need positive data and simulation; weekly is a speed case
            continue
        best = case["starts"][case["best"]]
        y = pd.Series(np.asarray(case["y"], float))
        m = case["period"]
        kw = dict(
            error="add",
            trend=None if case["trend"] == "none" else "add",
            damped_trend=case["trend"] == "damped",
            seasonal=None if case["season"] == "none" else "add",
            seasonal_periods=m if case["season"] != "none" else None,
        )
        res = ETSModel(y, initialization_method="estimated", **kw).fit(disp=False, maxiter=200)
        k = int(res.df_model)
        name = case["dataset"] if "dataset" in case else case["name"].split(":")[0]
        entry = series.setdefault(name, {"name": name, "period": m, "y": case["y"], "forms": []})
        entry["forms"].append(
            {
                "trend": case["trend"],
                "season": case["season"],
                "llf": float(best["llf"]),
                "df_model": k,
                "nobs": len(case["y"]),
                "aicc": float(aicc(best["llf"], len(case["y"]), k)),
            }
        )
    out = []
    for entry in series.values():
        forms = sorted(entry["forms"], key=lambda f: f["aicc"])
        entry["chosen"] = [forms[0]["trend"], forms[0]["season"]]
        entry["margin"] = float(forms[1]["aicc"] - forms[0]["aicc"]) if len(forms) > 1 else None
        out.append(entry)
    with open(os.path.join(HERE, "select_reference.json"), "w") as f:
        json.dump(
            {"generator": "tests/reference/smoothing/generate_select.py",
             "statsmodels": statsmodels.__version__, "series": out},
            f, indent=1,
        )
        f.write("\n")


if __name__ == "__main__":
    main()
