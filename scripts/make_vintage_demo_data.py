#!/usr/bin/env python3
"""Write the INVENTED real-time demo data set
experiments/data/regional_output_vintages.csv.

Everything in the file is made up by this script: an invented regional
statistics office, its invented quarterly index of the region's gross output
(1998Q1 = 100), its invented business-survey balance, and the invented way the
office revises its output estimates. No real office, region or survey is
behind any number. The data exist only to demonstrate outturn's vintage
layout (see experiments/README.md); they are never used for expected values
in tests.

Python standard library only; a fixed seed makes the output byte-identical on
every run:

    python3 scripts/make_vintage_demo_data.py

How the numbers are made (quarterly, 1998Q1 to 2024Q4; vintages 2006Q1 to
2025Q1, one per quarter, in the long layout: period, vintage, columns):

- the true quarterly growth of output: 0.5 % a quarter on average, an AR(1)
  around it that is partly predictable from the survey, an invented
  downturn in 2008Q4-2009Q2 and a sharp dip and rebound in 2020Q2-Q3;
- survey_balance: the share of firms reporting rising orders minus the share
  reporting falling ones, in points; it leads output growth by a quarter and
  is never revised (every vintage holds the same values);
- output_index: the office publishes a quarter's first estimate in the next
  quarter (each vintage ends one quarter before its own period: a release
  lag of 1). The first estimate of a quarter's growth misses the truth by a
  seeded error (about 0.45 points); each of the next three quarterly
  releases removes about half of what remains, and the benchmark revision
  published once a year, in the vintages labelled Q3, removes the rest for
  every quarter at least five quarters old. A vintage's levels are the published growth
  rates chained from 1998Q1.
"""

import math
import os
import random

SEED = 20261203
FIRST_YEAR, LAST_YEAR = 1998, 2024
FIRST_VINTAGE = (2006, 1)
LAST_VINTAGE = (2025, 1)

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, os.pardir, "experiments", "data", "regional_output_vintages.csv")


def label(q):
    """Quarter ordinal (year * 4 + quarter - 1) as a label such as 2006Q1."""
    return "%dQ%d" % (q // 4, q % 4 + 1)


def true_series(rng, quarters):
    """True growth rates (in per cent) and the survey balance per quarter."""
    growth, survey = [], []
    g_prev, s_prev = 0.5, 0.0
    for i in range(quarters):
        year, quarter = FIRST_YEAR + i // 4, i % 4 + 1
        s = 0.6 * s_prev + rng.gauss(0.0, 4.0)
        shock = 0.0
        if (year, quarter) in ((2008, 4), (2009, 1), (2009, 2)):
            shock = -1.6
        if (year, quarter) == (2020, 2):
            shock = -6.0
        if (year, quarter) == (2020, 3):
            shock = 5.0
        g = 0.5 + 0.35 * (g_prev - 0.5) + 0.06 * s_prev + shock + rng.gauss(0.0, 0.45)
        growth.append(g)
        survey.append(s)
        g_prev, s_prev = g, s
    return growth, survey


def remaining(quarter, vintage, error):
    """What is left of a first-estimate error of `quarter` in `vintage`
    (both ordinals; the first estimate is published at quarter + 1)."""
    age = vintage - quarter
    left = error * 0.5 ** min(age - 1, 3)
    # The first benchmark vintage (a Q3 one) at least five quarters after
    # the quarter settles it, for good.
    benchmark = quarter + 5
    while benchmark % 4 != 2:
        benchmark += 1
    return 0.0 if vintage >= benchmark else left


def main():
    rng = random.Random(SEED)
    first = FIRST_YEAR * 4
    quarters = (LAST_YEAR - FIRST_YEAR + 1) * 4
    growth, survey = true_series(rng, quarters)
    errors = [rng.gauss(0.0, 0.45) for _ in range(quarters)]
    v0 = FIRST_VINTAGE[0] * 4 + FIRST_VINTAGE[1] - 1
    v1 = LAST_VINTAGE[0] * 4 + LAST_VINTAGE[1] - 1
    lines = ["period,vintage,output_index,survey_balance"]
    for v in range(v0, v1 + 1):
        level = 100.0
        for i in range(quarters):
            q = first + i
            if q >= v:
                break
            g = growth[i] + remaining(q, v, errors[i])
            if i > 0:
                level *= math.exp(g / 100.0)
            lines.append("%s,%s,%.2f,%.1f" % (label(q), label(v), level, survey[i]))
    with open(OUT, "w", newline="\n") as f:
        f.write("\n".join(lines) + "\n")


if __name__ == "__main__":
    main()
