"""Seeded generator for the demo data: an invented city courier cooperative.

Every row is made up. The effects below are the generator's truth, so tests can
check that the brief finds what was put in and nothing that was not:

* delivery minutes rise with distance (about MINUTES_PER_KM per km);
* vans are slow in the oldest district, Old Tannery (narrow lanes);
* time slot has no effect at all (the grouping with no real difference);
* a small share of deliveries hit a genuine long delay (the outliers);
* a few rows lack a measured time or distance, as real scans do.

Run ``python -m briefgen.demo.generate`` to rewrite ``deliveries.csv``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20260701
ROWS = 6000
DISTRICTS = ("Old Tannery", "Millbrook", "Harrow Quay", "Larkspur Heights", "Canal Row", "Eastgate")
OLDEST_DISTRICT = "Old Tannery"
VEHICLES = ("bicycle", "cargo bike", "van")
TIME_SLOTS = ("07-10", "10-13", "13-16", "16-19")
MINUTES_PER_KM = 3.0
VAN_SLOWDOWN_IN_OLDEST = 1.6
DELAY_SHARE = 0.005
MISSING_MINUTES = 12
MISSING_DISTANCE = 15

# Truth recorded for tests: which groupings carry a real difference.
TRUTH = {
    "slope_minutes_per_km": MINUTES_PER_KM,
    "groups_with_effect": ("vehicle", "district"),
    "groups_without_effect": ("time_slot",),
    "slow_cell": (OLDEST_DISTRICT, "van"),
}

_DISTRICT_FACTOR = dict(zip(DISTRICTS, (1.10, 1.00, 0.97, 1.03, 0.98, 1.00), strict=True))
_VEHICLE_FACTOR = {"bicycle": 1.00, "cargo bike": 1.08, "van": 0.92}
_VEHICLE_SHARE = (0.45, 0.30, 0.25)


def generate(seed: int = SEED, rows: int = ROWS) -> pd.DataFrame:
    """Return the demo deliveries as a DataFrame; same seed, same rows."""
    rng = np.random.default_rng(seed)
    district = rng.choice(DISTRICTS, size=rows, p=(0.14, 0.2, 0.18, 0.16, 0.17, 0.15))
    vehicle = rng.choice(VEHICLES, size=rows, p=_VEHICLE_SHARE)
    slot = rng.choice(TIME_SLOTS, size=rows)
    is_van = vehicle == "van"
    distance = rng.gamma(shape=2.2, scale=np.where(is_van, 2.6, 1.4))
    distance = np.clip(distance, 0.3, 30.0).round(2)
    parcels = rng.poisson(np.where(is_van, 4.0, 1.2)) + 1

    base = 5.0 + MINUTES_PER_KM * distance + 1.5 * (parcels - 1)
    factor = np.array([_DISTRICT_FACTOR[d] for d in district])
    factor *= np.array([_VEHICLE_FACTOR[v] for v in vehicle])
    factor *= np.where(is_van & (district == OLDEST_DISTRICT), VAN_SLOWDOWN_IN_OLDEST, 1.0)
    noise = rng.lognormal(mean=0.0, sigma=0.22, size=rows)
    minutes = base * factor * noise
    delayed = rng.random(rows) < DELAY_SHARE
    minutes = minutes + np.where(delayed, rng.uniform(60, 180, size=rows), 0.0)

    day = rng.integers(0, 92, size=rows)
    slot_start = np.array([int(s[:2]) for s in slot])
    minute_of_slot = rng.integers(0, 180, size=rows)
    dispatched = (
        pd.Timestamp("2026-07-01")
        + pd.to_timedelta(day, unit="D")
        + pd.to_timedelta(slot_start * 60 + minute_of_slot, unit="min")
    )

    frame = pd.DataFrame(
        {
            "dispatched_at": dispatched,
            "district": district,
            "vehicle": vehicle,
            "time_slot": slot,
            "distance_km": distance,
            "parcels": parcels,
            "delivery_minutes": minutes.round(1),
        }
    ).sort_values("dispatched_at", kind="stable", ignore_index=True)
    frame.loc[rng.choice(rows, MISSING_MINUTES, replace=False), "delivery_minutes"] = np.nan
    frame.loc[rng.choice(rows, MISSING_DISTANCE, replace=False), "distance_km"] = np.nan
    return frame


def main() -> None:
    target = Path(__file__).with_name("deliveries.csv")
    generate().to_csv(target, index=False, date_format="%Y-%m-%d %H:%M:%S")
    print(f"wrote {target}")


if __name__ == "__main__":
    main()
