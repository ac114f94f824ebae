"""The risk of breaking the limits as it is shown: per-hour columns in the plan's units,
headline lines, and the method in plain sentences.

One place for the words and the rounding of :class:`wzq.engine.risk.RiskResult`, so
the workbook's Results and Permit table sheets, its Summary and Charts, the printed
report and the bulk summary show the same numbers. Probabilities are shown in
percent with one decimal, queue lengths in the plan's long unit with two.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from wzq import units as u
from wzq.engine.risk import PROBABILITY_COLUMNS, RiskResult
from wzq.present.tables import LENGTH_UNKNOWN, Column, hour_label, rounded

__all__ = [
    "CAVEATS",
    "LIMIT_HEADS",
    "any_interval_text",
    "percent",
    "risk_columns",
    "risk_hour_table",
    "risk_method",
    "risk_summary_lines",
    "risk_values",
]

#: Words of each limit in a column heading (by probability column).
LIMIT_HEADS = {
    "p_queue_length": "queue limit",
    "p_delay": "delay limit",
    "p_demand_capacity": "D/C limit",
}

#: What the probabilities rest on and what they leave out, said wherever they are shown.
CAVEATS: tuple[str, ...] = (
    "The probabilities treat the scenarios as independent and equally likely samples of "
    "the site's traffic: true of the capacity draws, an assumption for historical weeks "
    "(neighbouring weeks are alike, and a year of counts gives only some of them), so read "
    "the intervals, not only the shares.",
    "Counts measure the traffic that got through, not the demand upstream of a past queue; "
    "days counted during works or incidents understate demand (leave them out).",
    "Each scenario runs the same deterministic model as the design day: diversion, "
    "incidents and random arrivals within the hour are not in it.",
)


def share_digits(p: float) -> str:
    """``12.5``: a share as a percentage with one decimal (rounded half away from zero,
    :func:`wzq.present.tables.rounded`), and more where one decimal
    would round a share that is neither 0 nor 1 to ``0.0`` or ``100.0`` (``0.01``,
    ``99.98``): 1 scenario of 10,000 is not none of them, nor 9,998 all."""
    x = 100 * p
    one = rounded(x, 1)  # half away from zero, as the tables round
    if not 0 < p < 1 or one not in (0.0, 100.0):
        return f"{one:.1f}"
    digits = -math.floor(math.log10(min(x, 100 - x)) + 1e-9)  # the gap's first digit
    return f"{rounded(x, digits):.{digits}f}"


def percent(p: float) -> str:
    """``12.5 %`` (a share as a percentage, :func:`share_digits`)."""
    return f"{share_digits(p)} %"


def risk_columns(risk: RiskResult, system: u.UnitSystem) -> list[Column]:
    """The per-hour risk columns shown beside the results, in the plan's units.

    The chance of breaking each limit that is set and any limit (percent), the
    interval of the latter, and the median, 85th and 95th percentiles of the
    longest queue.
    """
    h = risk.hourly
    level = f"{risk.options.confidence:.0%}"
    long_name, long_m = u.LONG_LENGTH[system]
    cols = [
        Column(f"Chance over the {LIMIT_HEADS[c]} (%)", c, 1, 100.0)
        for c in PROBABILITY_COLUMNS.values()
        if c in h
    ]
    cols += [
        Column("Chance over any limit (%)", "p_any", 1, 100.0),
        Column(f"Any limit, {level} interval from (%)", "p_any_low", 1, 100.0),
        Column(f"Any limit, {level} interval to (%)", "p_any_high", 1, 100.0),
    ]
    names = {50: "median", 85: "85th percentile", 95: "95th percentile"}
    for p in risk.percentiles:
        cols.append(
            Column(
                f"Longest queue, {names.get(p, f'{p}th percentile')} ({long_name})",
                f"queue_length_p{p}_m",
                2,
                1.0 / long_m,
            )
        )
    return cols


def risk_values(risk: RiskResult, columns: list[Column]) -> list[list[float | int | str | None]]:
    """Rounded display values, column by column (``None`` for a missing value; a
    percentile of the longest queue that is not known, :data:`LENGTH_UNKNOWN`; a chance
    with the digits of :func:`share_digits`, more than the column's where one decimal
    would show a share that is neither none nor all as 0.0 or 100.0)."""
    h = risk.hourly
    out: list[list[float | int | str | None]] = []
    for col in columns:
        raw = h[col.source].to_numpy(dtype=float)
        if col.source.startswith("p_"):
            out.append([None if np.isnan(p) else float(share_digits(p)) for p in raw])
            continue
        gap = LENGTH_UNKNOWN if col.source.startswith("queue_length_p") else None
        out.append([gap if np.isnan(v) else rounded(v, col.decimals) for v in raw * col.scale])
    return out


def any_interval_text(risk: RiskResult, i: int) -> str:
    """``12.5 % (4.1-27.0 %)``: the chance of breaking any limit in hour ``i``, with its
    interval."""
    row = risk.hourly.iloc[i]
    low, high = share_digits(row["p_any_low"]), share_digits(row["p_any_high"])
    return f"{percent(row['p_any'])} ({low}-{high} %)"


def risk_summary_lines(risk: RiskResult, system: u.UnitSystem) -> list[tuple[str, str]]:
    """Headline figures of the risk as (label, text) pairs in the plan's units."""
    s = risk.summary
    long_name, long_m = u.LONG_LENGTH[system]
    level = f"{risk.options.confidence:.0%}"
    lines = [
        ("Scenarios", f"{s.scenarios:,} equally likely ({risk.runs.scenarios.source})"),
        (
            "Some hour over a limit",
            f"in {percent(s.p_any_hour)} of the scenarios ({level} interval "
            f"{percent(s.p_any_hour_low)} to {percent(s.p_any_hour_high)})",
        ),
    ]
    if s.worst_hour is not None:
        lines.append(
            (
                "Riskiest hour",
                f"{hour_label(s.worst_hour)}: over a limit in {percent(s.worst_hour_p)}",
            )
        )
    else:
        lines.append(("Riskiest hour", "no hour breaks a limit in any scenario"))
    q = ", ".join(
        f"{p}th {LENGTH_UNKNOWN}" if math.isnan(v) else f"{p}th {v / long_m:,.2f} {long_name}"
        for p, v in s.longest_queue_m.items()
    )
    if any(math.isnan(v) for v in s.longest_queue_m.values()):
        q += " (traffic waits beyond the approach in some scenarios: see the method)"
    lines.append(("Longest queue of the plan", q))
    d = ", ".join(f"{p}th {v:,.0f}" for p, v in s.total_delay_veh_h.items())
    lines.append(("Total delay (veh-h)", d))
    return lines


def risk_method(risk: RiskResult) -> list[str]:
    """How the risk was obtained and what it rests on, in plain sentences."""
    out = list(risk.method())
    plan = risk.plan
    if plan.history is not None:
        h = plan.history
        source = h.file or h.counts.source
        out.insert(
            0,
            f"Count history: {source}, {h.counts.first_day:%Y-%m-%d} to "
            f"{h.counts.last_day:%Y-%m-%d} ({h.counts.interval_s // 60}-minute counts). "
            f"Design demand: {h.rule.describe()}.",
        )
    return out + list(CAVEATS)


def risk_hour_table(risk: RiskResult, system: u.UnitSystem, keep: np.ndarray) -> pd.DataFrame:
    """The hours ``keep`` with their risk columns, headed, as text with the decimals
    shown (``-`` for a missing value)."""
    cols = risk_columns(risk, system)
    h = risk.hourly
    idx = np.flatnonzero(keep)
    out = pd.DataFrame({"Hour": [hour_label(h["hour_start"].iloc[i]) for i in idx]})
    for col, vals in zip(cols, risk_values(risk, cols), strict=True):
        out[col.header] = [_shown(vals[i], col.decimals) for i in idx]
    return out


def _shown(v: float | int | str | None, decimals: int | None) -> str:
    """A value of :func:`risk_values` as text: ``-`` for a missing one, a text as it is."""
    if v is None:
        return "-"
    if isinstance(v, str):
        return v
    return f"{v:,.{decimals}f}" if round(v, decimals) == v else f"{v:,g}"
