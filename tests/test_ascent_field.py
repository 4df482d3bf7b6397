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

# Known misses after the issue-15 refit, model minus field: the early trek readings at
# 3365-3500 m run 4 points low, and Sato's day-12 mean at 3810 m 3.1 points low against an
# SD of 1.5. The model's ventilation is fitted to ISA3600's arterial gases (PaCO2 35.8 on
# day 3 at 3600 m), which imply lower saturations than these oximeter series.
MISSES = {"pomidori2009_3500m", "botella2008_3365m", "sato1994_3810m_day12"}


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
