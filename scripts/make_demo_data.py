#!/usr/bin/env python3
"""Write the INVENTED demo data set experiments/data/water_demand.csv.

Everything in the file is made up by this script: an invented regional water
utility, its invented monthly treated-water demand, an invented rainfall
deficit indicator and an invented school calendar. No real utility, region or
weather record is behind any number. The data exist only to demonstrate
outturn (see experiments/README.md); they are never used for expected values
in tests.

Python standard library only; a fixed seed makes the output byte-identical on
every run:

    python3 scripts/make_demo_data.py

How the numbers are made (monthly, 2007-01 to 2024-12, plus 3 future rows):

- rain_deficit_mm: millimetres of rain below the (invented) long-run normal
  for the month, positive = drier than normal; a mildly persistent AR(1).
  Published with a one-month delay, so the last month is empty.
- school_holiday_days: days of the month inside the (invented) school
  holidays, from fixed calendar rules with Easter moving between March and
  April. Known ahead, so it also fills the 3 future rows.
- demand_ml: treated water put into supply, megalitres per month. A mild
  upward trend (population), a summer peak, a small lift per school-holiday
  day, persistent noise, and two responses to dry weather: garden watering
  in the same month (stronger in the warm half of the year) and, with a
  delay, households whose rainwater tanks run low after a dry spell and
  switch to mains water (mostly the deficit of two months before). The delay
  is what lets a one-month-late rainfall figure help a little at horizon 1.
  From mid-2020 an (invented) tank-rebate and tiered-tariff programme lowers
  demand by about 4 % and makes it react less to dry weather: a mild regime
  shift late in the sample.
"""

import datetime
import math
import os
import random

SEED = 20260115
FIRST_YEAR, LAST_YEAR = 2007, 2024  # target observed for these years
FUTURE_MONTHS = 3  # rows after the target's last value (calendar column only)
BURN_IN = 24  # months simulated before 2007-01 so the processes start settled

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, os.pardir, "experiments", "data", "water_demand.csv")


def easter_sunday(year):
    """Gregorian Easter (anonymous Gregorian algorithm, Meeus/Jones/Butcher)."""
    a = year % 19
    b, c = divmod(year, 100)
    d, e = divmod(b, 4)
    f = (b + 8) // 25
    g = (b - f + 1) // 3
    h = (19 * a + b - d - g + 15) % 30
    i, k = divmod(c, 4)
    l = (32 + 2 * e + 2 * i - h - k) % 7
    m = (a + 11 * h + 22 * l) // 451
    month, day = divmod(h + l - 7 * m + 114, 31)
    return datetime.date(year, month, day + 1)


def saturday_on_or_after(day):
    return day + datetime.timedelta(days=(5 - day.weekday()) % 7)


def holiday_ranges(year):
    """Invented school-holiday periods touching `year`, as (first, last) dates."""
    one = datetime.timedelta(days=1)
    ranges = []
    # Christmas break of the previous winter, ending in January.
    xmas_prev = saturday_on_or_after(datetime.date(year - 1, 12, 19))
    ranges.append((xmas_prev, xmas_prev + 15 * one))
    # February half-term: the 9 days from the Saturday on or after 12 February.
    feb = saturday_on_or_after(datetime.date(year, 2, 12))
    ranges.append((feb, feb + 8 * one))
    # Easter: two weeks and two weekends, from the Saturday 8 days before Easter.
    easter = easter_sunday(year)
    ranges.append((easter - 8 * one, easter + 7 * one))
    # Summer: from the Saturday on or after 20 July to the Sunday before the
    # first Tuesday of September.
    summer = saturday_on_or_after(datetime.date(year, 7, 20))
    sept = datetime.date(year, 9, 1)
    first_tuesday = sept + datetime.timedelta(days=(1 - sept.weekday()) % 7)
    ranges.append((summer, first_tuesday - 2 * one))
    # October half-term: the 9 days from the Saturday on or after 22 October.
    octo = saturday_on_or_after(datetime.date(year, 10, 22))
    ranges.append((octo, octo + 8 * one))
    # Christmas break starting this December.
    xmas = saturday_on_or_after(datetime.date(year, 12, 19))
    ranges.append((xmas, xmas + 15 * one))
    return ranges


def school_holiday_days(year, month):
    first = datetime.date(year, month, 1)
    nxt = datetime.date(year + month // 12, month % 12 + 1, 1)
    days = 0
    for start, end in holiday_ranges(year):
        lo, hi = max(start, first), min(end, nxt - datetime.timedelta(days=1))
        if hi >= lo:
            days += (hi - lo).days + 1
    return days


def fmt(value, decimals):
    """Fixed decimals, never a negative zero."""
    text = "%.*f" % (decimals, value)
    return text[1:] if text.startswith("-") and float(text) == 0.0 else text


def main():
    rng = random.Random(SEED)
    n_obs = (LAST_YEAR - FIRST_YEAR + 1) * 12
    n_all = BURN_IN + n_obs + FUTURE_MONTHS

    rain = 0.0  # rain deficit, mm
    past_rain = [0.0, 0.0, 0.0]  # deficits of the last three months, newest last
    noise = 0.0  # transitory demand noise, ML
    drift = 0.0  # slowly wandering level (habits, leaks), ML
    rows = []
    for step in range(n_all):
        months_from_start = step - BURN_IN  # 0 at 2007-01
        year = FIRST_YEAR + months_from_start // 12
        month = months_from_start % 12 + 1
        years = months_from_start / 12.0

        rain = 0.5 * rain + rng.gauss(0.0, 20.0)
        noise = 0.3 * noise + rng.gauss(0.0, 5.0)
        drift += rng.gauss(0.0, 2.2)

        level = 415.0 * 1.011 ** years  # population growth, ~1.1 % a year
        summer = math.cos(2 * math.pi * (month - 7) / 12)  # peak in July
        season = (62.0 * summer + 9.0 * math.cos(4 * math.pi * (month - 7) / 12)) * (level / 415.0)

        # The invented tank-rebate and tariff programme phases in over
        # 2020-07 .. 2020-12.
        since = months_from_start - ((2020 - FIRST_YEAR) * 12 + 6)
        phase = min(max((since + 1) / 6.0, 0.0), 1.0)
        level *= 1.0 - 0.04 * phase
        sensitivity = 1.0 - 0.35 * phase

        garden = 0.10 * (1.0 + 0.6 * summer) * rain
        tanks = 0.06 * past_rain[2] + 0.17 * past_rain[1] + 0.07 * past_rain[0]
        weather = sensitivity * (garden + tanks)
        holidays = school_holiday_days(year, month)
        demand = level + season + weather + 0.45 * holidays + drift + noise
        past_rain = past_rain[1:] + [rain]

        if months_from_start < 0:
            continue
        period = "%04d-%02d" % (year, month)
        if months_from_start < n_obs:
            rain_cell = "" if months_from_start == n_obs - 1 else fmt(rain, 1)
            rows.append((period, fmt(demand, 2), rain_cell, str(holidays)))
        else:  # the future: only the known-ahead calendar column
            rows.append((period, "", "", str(holidays)))

    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    with open(OUT, "w", newline="\n") as f:
        f.write("period,demand_ml,rain_deficit_mm,school_holiday_days\n")
        for row in rows:
            f.write(",".join(row) + "\n")
    print("wrote %s (%d rows)" % (os.path.normpath(OUT), len(rows)))


if __name__ == "__main__":
    main()
