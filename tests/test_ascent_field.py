"""The whole chain against field SpO2 of lowlanders (the check set: nothing here is fitted).

tests/data/field_spo2_lowlanders.csv holds the series, their sources and our reconstruction
of each itinerary. A series passes when the model's forecast for that day and altitude is
within two SDs of the published mean (the published SD where there is one, else the model's
own between-person SD): a mean of trekkers an ordinary spread of people away from the
forecast. The misses are marked as such (strict: they fail the day the model meets them).
"""

import csv
from pathlib import Path

import pytest
from o2transit.model.acclimatization import VENTILATION_SD_MMHG
from o2transit.model.ascent import AscentDay, AscentProfile, forecast_points

DATA = Path(__file__).resolve().parent / "data" / "field_spo2_lowlanders.csv"

# Known misses, model minus field against two published SDs: the early trek readings at
# 3365-3500 m (pomidori2009_3500m -4.3 against 2.8, botella2008_3365m -4.2 against 2.8). Our
# itineraries there are reconstructions; an expedition that spent nights at 2200-2500 m
# before the approach (as such trips often do, from memory) would read higher. Sato's day-12
# mean, a miss while its +- was read as an SD, passes with it read as an SE (n 6). Measured
# (issue 15): two nights at 1400 m before Lukla move Pomidori's to -2.4, three more nights
# at 2230 m move Botella's to -3.1; the papers' itineraries were not read, so neither is used.
MISSES = {"pomidori2009_3500m", "botella2008_3365m"}

# The central forecast still runs low in the first days at 3300-3800 m (model minus field
# about -3 to -4 points): inside the spread between people, but a bias. The model's
# ventilation is fitted to ISA3600's arterial gases (PaCO2 35.8 on day 3 at 3600 m) and its
# day-12 PaO2 matches theirs (56.4 against 56.1 mmHg), so the gap is between those arterial
# gases and these oximeter series; we found no published cause we could apply (oximeter
# bias above SaO2 75 % was 0.1 points in Chapman et al., Chest 1986;89:540-2, abstract
# read). Strict: the test fails the day the bias is mended.
# Ruled out as the whole cause (issue 15, measured): the curve model (Dash 2016, tanh 1990
# and Hill lie -0.8 to +0.6 points from Severinghaus at PO2 47-60 mmHg), the pressure
# model (West 1996: 486.6 mmHg where Sato reports about 488), averaging over people (the
# mean over the spread lies 0.6-0.9 points below the central forecast), the ventilation
# time course alone (made instant, Sato's day 12 still misses by -2.8 while day 2
# overshoots by +2.8) and ISA3600's day-3 PaCO2 (whose own HCO3 20.4 gives pH 7.37; fitted
# without it, their days 5-7 and 12-16 still give a time constant of 3.0-3.4 d). A person
# meeting each reading needs PaCO2 30.7-32.8 mmHg on days 2-3 at 3440-3810 m, where
# ISA3600 measured 32.4 only on days 5-7, and 26.5 on Sato's day 12 and 27.4 on Botella's
# day 5 at 3365 m, below the 30.7 ISA3600 measured after 12-16 days at 3600 m.
BIAS_LIMIT_POINTS = 2.0


def _rows():
    with open(DATA, encoding="utf-8") as f:
        lines = [line for line in f if not line.startswith("#")]
    return list(csv.DictReader(lines))


ROWS = _rows()


def forecast(row) -> tuple[float, float]:
    """(central forecast, the model's between-person SD) in SpO2 points."""
    nights = [float(h) for h in row["nights_m"].split(";")]
    p = AscentProfile(row["series"], tuple(AscentDay(h) for h in nights))
    day, alt = int(row["day"]), float(row["altitude_m"])
    s = (
        100.0
        * forecast_points(p, [day], [alt], [0.0, VENTILATION_SD_MMHG, -VENTILATION_SD_MMHG])[:, 0]
    )
    return float(s[0]), float((s[2] - s[1]) / 2.0)


@pytest.mark.parametrize(
    "row",
    [
        pytest.param(
            r,
            id=r["series"],
            marks=pytest.mark.xfail(strict=True, reason="known miss, see MISSES")
            if r["series"] in MISSES
            else (),
        )
        for r in ROWS
        if r["in_range"] == "yes"
    ],
)
def test_daytime_spo2_within_the_published_spread(row):
    model, model_sd = forecast(row)
    sd = float(row["spo2_sd_pct"]) if row["spo2_sd_pct"] else model_sd
    mean = float(row["spo2_mean_pct"])
    assert abs(model - mean) <= 2.0 * sd, (row["series"], model, mean, sd)


@pytest.mark.xfail(strict=True, reason="central forecast about 3 points low, see BIAS_LIMIT_POINTS")
def test_mean_bias_of_the_central_forecast():
    rows = [r for r in ROWS if r["in_range"] == "yes"]
    bias = sum(forecast(r)[0] - float(r["spo2_mean_pct"]) for r in rows) / len(rows)
    assert abs(bias) <= BIAS_LIMIT_POINTS, bias
