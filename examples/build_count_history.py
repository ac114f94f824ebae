"""Generate the invented count history of the demo: one year at an invented count station.

INVENTED DATA. There is no Larkspur Vale Expressway, no town of Amberfold and
no count station LV0417; the counts below come from this script, not from a
road. They exist to show how ``wzq`` turns a count history into a design
demand and a risk of breaking the limits.

The station counts the eastbound direction of a three-lane expressway, lane by
lane, every hour of 2026, and the file is written as FHWA Traffic Monitoring
Guide hourly traffic volume records (TMG 2013 layout, 143 columns; see
:mod:`wzq.io.counts`), one record per lane and day, state code ``00`` (no state).

The process, seeded so it gives the same file every time:

1. a typical hourly profile for each day type (Monday-Thursday, Friday,
   Saturday, Sunday; :data:`PROFILES`, veh/h for the whole direction), with
   Monday a little lighter and Thursday a little heavier (:data:`DAY_FACTOR`);
   listed public holidays follow the Sunday profile at 95 %;
2. a seasonal factor ``1 + 0.06 sin(2 pi (day of year - 105) / 365.25)``
   (lightest in late January, busiest in late July);
3. random variation at three time scales, each a factor drawn from a normal
   distribution with mean 1: per week (standard deviation 3.5 %: weather,
   school terms), per day (4.5 %: events, incidents elsewhere) and per hour
   (3 %);
4. the expected count of each lane (lane shares 30/36/34 %, lane 1 the
   outside lane) drawn from a Poisson distribution, as counts of independent
   arrivals are;
5. the faults a real station shows, placed on purpose so the reader has
   something to find: a counter outage (10:00-16:00 on 10 February, hours left
   blank), the day the clocks go forward (8 March, 02:00 left blank), a lane
   that did not report for three days (lane 3, 16-18 June), and a day coded
   with restriction 1, construction affecting the flow (22 September, counts
   cut by 30 %).

Run from the repository root::

    python examples/build_count_history.py
"""

from __future__ import annotations

import datetime as dt
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
TARGET = HERE / "larkspur_vale_eb_2026.vol"
SEED = 20260417
YEAR = 2026
STATION = "LV0417"
STATE = "00"  # no state: the station is invented
FUNCTIONAL_CLASS = "2U"  # urban freeway or expressway
DIRECTION = "3"  # east
LANE_SHARE = (0.30, 0.36, 0.34)

PROFILES = {
    "mon-thu": [
        380, 250, 200, 220, 420, 1300, 3300, 4700, 4400, 3300, 2900, 2900,
        3000, 3000, 3200, 3700, 4300, 4500, 3700, 2700, 2100, 1700, 1200, 750,
    ],
    "friday": [
        420, 280, 220, 230, 400, 1150, 2900, 4200, 4000, 3300, 3100, 3200,
        3400, 3500, 3800, 4300, 4700, 4600, 3900, 3000, 2500, 2100, 1600, 1000,
    ],
    "saturday": [
        700, 480, 360, 300, 330, 550, 900, 1400, 2000, 2600, 3000, 3200,
        3300, 3250, 3150, 3050, 2950, 2800, 2500, 2100, 1800, 1550, 1250, 900,
    ],
    "sunday": [
        750, 520, 380, 300, 280, 400, 650, 950, 1400, 1900, 2400, 2800,
        3000, 3050, 3050, 3000, 2950, 2850, 2600, 2200, 1800, 1400, 1000, 600,
    ],
}  # fmt: skip
#: Monday ... Thursday share one profile; these factors set them apart a little.
DAY_FACTOR = {0: 0.97, 1: 1.0, 2: 1.01, 3: 1.03}
HOLIDAYS = (
    dt.date(2026, 1, 1),
    dt.date(2026, 5, 25),
    dt.date(2026, 7, 3),
    dt.date(2026, 9, 7),
    dt.date(2026, 11, 26),
    dt.date(2026, 12, 25),
)
OUTAGE = (dt.date(2026, 2, 10), range(10, 16))
CLOCKS_FORWARD = dt.date(2026, 3, 8)
LANE_OUT = (3, (dt.date(2026, 6, 16), dt.date(2026, 6, 17), dt.date(2026, 6, 18)))
CONSTRUCTION = dt.date(2026, 9, 22)


def expected(day: dt.date, rng: np.random.Generator, week_factor: float) -> np.ndarray:
    """Expected hourly flows of the whole direction on ``day`` (veh/h)."""
    wd = day.weekday()
    if day in HOLIDAYS:
        base = np.array(PROFILES["sunday"], dtype=float) * 0.95
    elif wd <= 3:
        base = np.array(PROFILES["mon-thu"], dtype=float) * DAY_FACTOR[wd]
    else:
        base = np.array(PROFILES[("friday", "saturday", "sunday")[wd - 4]], dtype=float)
    doy = day.timetuple().tm_yday
    season = 1.0 + 0.06 * np.sin(2 * np.pi * (doy - 105) / 365.25)
    day_factor = rng.normal(1.0, 0.045)
    hour_factor = rng.normal(1.0, 0.03, 24)
    return base * season * week_factor * day_factor * hour_factor


def tmg_record(day: dt.date, lane: int, volumes: list[int | None], restriction: str) -> str:
    """One TMG 2013 hourly traffic volume record (Table 7-9 layout, 143 columns)."""
    dow = (day.weekday() + 1) % 7 + 1  # 1 = Sunday ... 7 = Saturday
    hours = "".join(" " * 5 if v is None else f"{v:05d}" for v in volumes)
    record = (
        f"3{STATE}{FUNCTIONAL_CLASS}{STATION}{DIRECTION}{lane}"
        f"{day:%Y}{day:%m}{day:%d}{dow}{hours}{restriction}"
    )
    assert len(record) == 143
    return record


def build() -> list[str]:
    rng = np.random.Generator(np.random.PCG64(SEED))
    lines: list[str] = []
    day = dt.date(YEAR, 1, 1)
    week_factor = {}
    while day.year == YEAR:
        week = day.isocalendar()[:2]
        if week not in week_factor:
            week_factor[week] = rng.normal(1.0, 0.035)
        flows = expected(day, rng, week_factor[week])
        restriction = "0"
        if day == CONSTRUCTION:
            flows = flows * 0.7
            restriction = "1"
        for lane, share in enumerate(LANE_SHARE, start=1):
            counts: list[int | None] = [int(c) for c in rng.poisson(flows * share)]
            if day == OUTAGE[0]:
                for h in OUTAGE[1]:
                    counts[h] = None
            if day == CLOCKS_FORWARD:
                counts[2] = None
            if lane == LANE_OUT[0] and day in LANE_OUT[1]:
                continue
            lines.append(tmg_record(day, lane, counts, restriction))
        day += dt.timedelta(days=1)
    return lines


def main() -> int:
    lines = build()
    TARGET.write_text("\n".join(lines) + "\n", encoding="ascii")
    print(f"wrote {TARGET.name}: {len(lines)} records (invented data)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
