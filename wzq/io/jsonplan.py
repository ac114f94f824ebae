"""Plans as plain JSON: read, write, and the conversion of units at the edge.

The JSON states its unit system once (``"units": "us"`` or ``"metric"``) and
every value is in that system: speeds mi/h or km/h, work-zone length mi or km,
lateral clearance ft or m, jam density veh/mi/ln or veh/km/ln, ramp density per
mi or per km, queue-length limit mi or km, landmark distances mi or km, backward
wave speed mi/h or km/h, density at capacity veh/mi/ln or veh/km/ln. Flows are
veh/h, delays minutes, shares percent. The README documents the schema.
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path
from typing import Any

import numpy as np

from wzq import units as u
from wzq.engine.plan import (
    Approach,
    Closure,
    Costs,
    Demand,
    Landmark,
    Meta,
    Options,
    Plan,
    PlanError,
    Problem,
    Site,
    Thresholds,
)
from wzq.io import fields as F
from wzq.io.jsonhistory import history_demand, history_to_dict, risk_from_dict, risk_to_dict

__all__ = [
    "CLOSURE_KEYS",
    "COST_KEYS",
    "FORMAT",
    "LANDMARK_KEYS",
    "META_KEYS",
    "OPTION_KEYS",
    "SITE_KEYS",
    "THRESHOLD_KEYS",
    "TOP_KEYS",
    "VERSION",
    "load_plan",
    "parse_datetime",
    "plan_from_dict",
    "plan_to_dict",
    "save_plan",
]

FORMAT = "wzq-plan"
VERSION = 1

SITE_KEYS = F.json_keys("site")
CLOSURE_KEYS = {
    "start",
    "end",
    "lanes_closed",
    "barrier",
    "night",
    "capacity_override_veh_h_ln",
    "note",
}
TOP_KEYS = {
    "format",
    "version",
    "units",
    "meta",
    "site",
    "demand",
    "closures",
    "thresholds",
    "costs",
    "options",
    "risk",
    "approach",
}
LANDMARK_KEYS = {"name", "distance", "kind", "veh_h", "share_percent"}
THRESHOLD_KEYS = {*F.json_keys("thresholds"), "queue_must_not_pass"}
COST_KEYS = F.json_keys("costs")
OPTION_KEYS = F.json_keys("options")
META_KEYS = F.json_keys("meta")


def parse_datetime(text: str) -> dt.datetime:
    """ISO date-time; ``24:00`` means midnight at the end of that day."""
    text = text.strip()
    if text.endswith(("T24:00", " 24:00", "T24:00:00", " 24:00:00")):
        day = dt.date.fromisoformat(text[:10])
        return dt.datetime.combine(day + dt.timedelta(days=1), dt.time())
    return dt.datetime.fromisoformat(text)


class _Reader:
    """Pulls typed values out of nested dicts, collecting every problem."""

    def __init__(self, source: str) -> None:
        self.source = source
        self.problems: list[Problem] = []
        self.notes: list[str] = []  # values read as typed that may not be meant so

    def where(self, key: str) -> str:
        return f"{self.source}: {key}"

    def bad(self, key: str, message: str) -> None:
        self.problems.append(Problem(self.where(key), message))

    def unknown(self, d: dict[str, Any], allowed: set[str], path: str) -> None:
        for k in d:
            if k not in allowed:
                self.bad(
                    f"{path}.{k}" if path else k,
                    f"unknown key; allowed: {', '.join(sorted(allowed))}",
                )

    def number(
        self,
        d: dict[str, Any],
        key: str,
        path: str,
        default: Any = ...,
        lo: float | None = None,
        whole: bool = False,
    ) -> Any:
        full = f"{path}.{key}"
        if key not in d or d[key] is None:
            if default is ...:
                self.bad(full, "required number is missing")
                return float("nan")
            return default
        v = d[key]
        if isinstance(v, bool) or not isinstance(v, int | float) or not np.isfinite(v):
            self.bad(full, f"expected a number, got {v!r}")
            return float("nan") if default is ... or default is None else default
        if lo is not None and v < lo:
            self.bad(full, f"must be at least {lo}, got {v}")
        if whole and v != int(v):  # a count of lanes, a year: never cut to a whole number
            self.bad(full, f"must be a whole number, got {v:g}")
        return float(v)

    def text(self, d: dict[str, Any], key: str, path: str, default: str | None = None) -> str:
        v = d.get(key, default)
        if v is None:
            self.bad(f"{path}.{key}", "required text is missing")
            return ""
        if not isinstance(v, str):
            self.bad(f"{path}.{key}", f"expected text, got {v!r}")
            return str(v)
        return v

    def when(self, d: dict[str, Any], key: str, path: str) -> dt.datetime:
        v = d.get(key)
        try:
            if not isinstance(v, str):
                raise ValueError
            when = parse_datetime(v)
        except ValueError:
            self.bad(f"{path}.{key}", f"expected a date-time like 2027-05-03T21:00, got {v!r}")
            return dt.datetime(2000, 1, 1)
        if when.tzinfo is not None:  # the plan is in the site's clock time throughout
            self.bad(
                f"{path}.{key}",
                f"{v!r} has a time zone; give the site's local clock time without it, "
                f"like {when.replace(tzinfo=None).isoformat(timespec='minutes')}",
            )
            return dt.datetime(2000, 1, 1)
        return when


def _fraction_note(r: _Reader, key: str, f: F.Field, x: float | None) -> None:
    """Query a percentage given as a fraction (0.08 for 8 %) at its key."""
    if x is not None and f.looks_like_fraction(x):
        r.notes.append(
            f"{key}: {f.label} is {x:g} %: did you mean {x * 100:g} %? "
            f"Percentages are given as numbers of percent ({x * 100:g} for "
            f"{x * 100:g} %); ignore this if {x:g} % is right"
        )


def _read_section(r: _Reader, d: dict[str, Any], section: str, system: str) -> dict[str, Any]:
    """The plan values of one JSON section, by the schema (:mod:`wzq.io.fields`): each
    key read as its kind, with its default and least value, converted to the plan's
    units. The inputs read with rules of their own (:data:`wzq.io.fields.WHEN_USED_KEYS`:
    the site's congested branch, the landmark limit) are left out."""
    out: dict[str, Any] = {}
    for f in F.section_inputs(section):
        if f.key in F.WHEN_USED_KEYS:
            continue
        key = f.key.split(".", 1)[1]
        if f.kind in ("text", "choice"):
            value = r.text(d, key, section, f.json_default)
        else:
            x = r.number(d, key, section, f.json_default, lo=f.json_lo, whole=f.kind == "int")
            _fraction_note(r, f"{section}.{key}", f, x)
            value = (int(x) if np.isfinite(x) else 0) if f.kind == "int" else x
            value = F.to_plan(f, value, system)
        out[f.attribute.split(".", 1)[1]] = value
    return out


def plan_from_dict(data: dict[str, Any], source: str = "plan", base: Path | None = None) -> Plan:
    """Build a :class:`Plan` from the JSON structure, reporting every problem at once.

    ``base`` is the folder a count history's file is named relative to (the
    plan file's folder; default the current folder).
    """
    r = _Reader(source)
    if not isinstance(data, dict):
        raise PlanError([Problem(source, "the file must hold one JSON object")])
    r.unknown(data, TOP_KEYS, "")
    if data.get("format", FORMAT) != FORMAT:
        r.bad("format", f"expected '{FORMAT}'")
    system = data.get("units")
    if system not in u.UNIT_SYSTEMS:
        r.bad("units", "state the unit system: 'us' or 'metric'")
        system = "us"
    s = data.get("site") or {}
    if not isinstance(s, dict):
        r.bad("site", "expected an object")
        s = {}
    r.unknown(s, SITE_KEYS, "site")
    spd = lambda v: None if v is None else u.speed_to_mps(v, system)  # noqa: E731
    wave = r.number(s, "wave_speed", "site", None, lo=0)
    k_cap = r.number(s, "density_at_capacity", "site", None, lo=0)
    branch = s.get("congested_branch")
    if branch is None:
        if wave is not None and k_cap is not None:
            r.bad(
                "site.wave_speed",
                "give the backward wave speed or the density at capacity, not both "
                "(the other follows from the capacity and the jam density)",
            )
        branch = "derived"
        if wave is not None:
            branch = "wave-speed"
        elif k_cap is not None:
            branch = "density-at-capacity"
    elif not isinstance(branch, str):
        r.bad("site.congested_branch", f"expected text, got {branch!r}")
        branch = "derived"
    site_kw = _read_section(r, s, "site", system)
    site_kw.update(
        unit_system=system,
        congested_branch=branch,
        wave_speed=spd(wave),
        density_at_capacity=None if k_cap is None else u.density_to_per_m(k_cap, system),
    )
    d = data.get("demand") or {}
    if not isinstance(d, dict):
        r.bad("demand", "expected an object")
        d = {}
    r.unknown(d, {"start", "interval_minutes", "veh_h", "hours", "history"}, "demand")
    start = r.when(d, "start", "demand")
    interval = r.number(d, "interval_minutes", "demand", 60.0)
    history = risk = None
    if "history" in d and not r.problems:  # demand from a count history (wzq.io.jsonhistory)
        try:
            lanes = site_kw.get("lanes")
            lanes = lanes if isinstance(lanes, int) else None
            designed, history, found = history_demand(d, start, source, base, lanes)
            r.notes += found
            d = {"veh_h": designed.flows_veh_h.tolist()}
            interval = designed.interval_s / 60
        except PlanError as e:
            r.problems += e.problems
            d = {"veh_h": [0.0]}
    elif "hours" in d:
        r.bad("demand.hours", "used only with a count history; give veh_h alone")
    if data.get("risk") is not None:
        try:
            risk = risk_from_dict(data["risk"], source)
        except PlanError as e:
            r.problems += e.problems
    flows = d.get("veh_h")
    if not isinstance(flows, list) or not flows:
        r.bad("demand.veh_h", "expected a list of hourly (or 15-minute) flows in veh/h")
        flows = [0.0]
    arr = np.zeros(len(flows))
    for i, v in enumerate(flows):
        if isinstance(v, bool) or not isinstance(v, int | float) or not np.isfinite(v) or v < 0:
            r.bad(f"demand.veh_h[{i}]", f"expected a flow of 0 veh/h or more, got {v!r}")
        else:
            arr[i] = v
    closures = []
    raw = data.get("closures") or []
    if not isinstance(raw, list):
        r.bad("closures", "expected a list")
        raw = []
    for i, c in enumerate(raw):
        path = f"closures[{i}]"
        if not isinstance(c, dict):
            r.bad(path, "expected an object")
            continue
        r.unknown(c, CLOSURE_KEYS, path)
        night = c.get("night")
        if night is not None and not isinstance(night, bool):
            r.bad(f"{path}.night", "expected true, false or null (derived from the clock)")
            night = None
        lc = r.number(c, "lanes_closed", path, lo=0, whole=True)
        closures.append(
            Closure(
                start=r.when(c, "start", path),
                end=r.when(c, "end", path),
                lanes_closed=int(lc) if np.isfinite(lc) else 0,
                barrier=r.text(c, "barrier", path, "soft"),
                night=night,
                capacity_override_veh_h_ln=r.number(c, "capacity_override_veh_h_ln", path, None),
                note=r.text(c, "note", path, ""),
            )
        )
    t = data.get("thresholds") or {}
    r.unknown(t, THRESHOLD_KEYS, "thresholds")
    must_not_pass = t.get("queue_must_not_pass")
    if must_not_pass is not None and not isinstance(must_not_pass, str):
        r.bad(
            "thresholds.queue_must_not_pass", f"expected a landmark's name, got {must_not_pass!r}"
        )
        must_not_pass = None
    thresholds = Thresholds(
        **_read_section(r, t, "thresholds", system), queue_must_not_pass=must_not_pass
    )
    approach = _approach_from_dict(r, data.get("approach"), system)
    costs = None
    if data.get("costs"):
        c = data["costs"]
        r.unknown(c, COST_KEYS, "costs")
        costs = Costs(**_read_section(r, c, "costs", system))
    o = data.get("options") or {}
    r.unknown(o, OPTION_KEYS, "options")
    options = Options(
        **{
            f.attribute.split(".", 1)[1]: (
                bool(o.get(k, f.json_default))
                if isinstance(f.json_default, bool)
                else o.get(k, f.json_default)
            )
            for f in F.section_inputs("options")
            for k in [f.key.split(".", 1)[1]]
        }
    )
    m = data.get("meta") or {}
    r.unknown(m, META_KEYS, "meta")
    meta = Meta(
        **{k: str(m.get(k, "")) for k in (f.key.split(".", 1)[1] for f in F.section_inputs("meta"))}
    )
    if r.problems:
        raise PlanError(r.problems)
    try:
        return Plan(
            site=Site(**site_kw),
            demand=Demand(start, round(interval * 60), arr),
            closures=tuple(closures),
            thresholds=thresholds,
            costs=costs,
            options=options,
            meta=meta,
            history=history,
            risk=risk,
            approach=approach,
            input_warnings=tuple(r.notes),
        )
    except PlanError as e:
        raise PlanError([Problem(f"{source}: {p.where}", p.message) for p in e.problems]) from None


#: A ramp's share of the mainline flow, queried like the other percentages.
_RAMP_SHARE = F.Field("share_percent", "Ramp flow", "number", "%")


def _approach_from_dict(r: _Reader, a: Any, system: u.UnitSystem) -> Approach:
    """The ``approach`` object: its landmarks, ramps with their flows."""
    if a is None:
        return Approach()
    if not isinstance(a, dict):
        r.bad("approach", "expected an object with a list of landmarks")
        return Approach()
    r.unknown(a, {"landmarks"}, "approach")
    raw = a.get("landmarks") or []
    if not isinstance(raw, list):
        r.bad("approach.landmarks", "expected a list")
        return Approach()
    out = []
    for i, lm in enumerate(raw):
        path = f"approach.landmarks[{i}]"
        if not isinstance(lm, dict):
            r.bad(path, "expected an object")
            continue
        r.unknown(lm, LANDMARK_KEYS, path)
        flows = lm.get("veh_h")
        hourly: tuple[float, ...] | None = None
        if flows is not None:
            if not isinstance(flows, list):
                r.bad(f"{path}.veh_h", "expected a list of hourly flows in veh/h")
            else:
                values = []
                for k, v in enumerate(flows):
                    if isinstance(v, bool) or not isinstance(v, int | float) or not np.isfinite(v):
                        r.bad(f"{path}.veh_h[{k}]", f"expected a flow in veh/h, got {v!r}")
                        v = 0.0
                    values.append(float(v))
                hourly = tuple(values)
        share = r.number(lm, "share_percent", path, None, lo=0)
        _fraction_note(r, f"{path}.share_percent", _RAMP_SHARE, share)
        out.append(
            Landmark(
                name=r.text(lm, "name", path),
                distance=u.long_length_to_m(r.number(lm, "distance", path, lo=0), system),
                kind=r.text(lm, "kind", path, "other"),
                ramp_veh_h=hourly,
                ramp_share=None if share is None else share / 100.0,
            )
        )
    return Approach(tuple(out))


#: The largest JSON plan read (bytes), as the largest workbook
#: (:data:`wzq.io.workbook.safety.LIMITS`): a year of 15-minute demand takes about 0.3 MB.
MAX_PLAN_BYTES = 50 * 1024 * 1024


def load_plan(path: str | Path) -> Plan:
    """Read a JSON plan file.

    A byte-order mark at the start (Windows Notepad writes one) is ignored, as RFC 8259,
    section 8.1, allows a JSON parser to do: it carries nothing of the plan.
    """
    path = Path(path)
    try:
        size = path.stat().st_size
        if size > MAX_PLAN_BYTES:
            raise PlanError(
                [
                    Problem(
                        path.name,
                        f"{size:,} bytes, more than a plan holds (at most {MAX_PLAN_BYTES:,}: "
                        "a year of 15-minute demand is about 300,000); is this the plan file?",
                    )
                ]
            )
        data = json.loads(path.read_text(encoding="utf-8-sig"), object_pairs_hook=_Object)
        twice = _given_twice(data, "")
    except (OSError, UnicodeDecodeError) as e:
        raise PlanError([Problem(str(path), f"cannot read the file: {e}")]) from None
    except json.JSONDecodeError as e:
        raise PlanError(
            [Problem(f"{path.name}: line {e.lineno}", f"not valid JSON ({e.msg}); fix the syntax")]
        ) from None
    except RecursionError:  # the parser's (or our walk's) limit: no plan nests so deep
        raise PlanError(
            [
                Problem(
                    path.name,
                    "arrays or objects nested inside each other hundreds of times over, more "
                    "deeply than a plan ever is; this is not a wzq plan",
                )
            ]
        ) from None
    if twice:
        raise PlanError([Problem(f"{path.name}: {key}", message) for key, message in twice])
    return plan_from_dict(data, path.name, path.parent)


class _Object(dict[str, Any]):
    """A JSON object that remembers the keys given twice in it: JSON readers keep the
    last value of a repeated key without a word, so a key typed twice would be read as
    one of the two values unseen."""

    def __init__(self, pairs: list[tuple[str, Any]]) -> None:
        super().__init__()
        self.twice: list[tuple[str, Any, Any]] = []
        for key, value in pairs:
            if key in self:
                self.twice.append((key, self[key], value))
            self[key] = value


def _given_twice(x: Any, path: str) -> list[tuple[str, str]]:
    """(key path, message) for every key given twice in one object, anywhere in ``x``."""
    out: list[tuple[str, str]] = []
    if isinstance(x, _Object):
        for key, first, then in x.twice:
            out.append(
                (
                    f"{path}.{key}" if path else key,
                    f"given twice ({json.dumps(first)[:40]}, then {json.dumps(then)[:40]}) "
                    "in one object; keep the one you mean",
                )
            )
        for key, value in x.items():
            out += _given_twice(value, f"{path}.{key}" if path else key)
    elif isinstance(x, list):
        for i, value in enumerate(x):
            out += _given_twice(value, f"{path}[{i}]")
    return out


def _iso(t: dt.datetime) -> str:
    return t.isoformat(timespec="minutes")


def _rounded(x: Any) -> Any:
    return None if x is None else round(float(x), 6)


def _write_section(obj: Any, section: str, system: str, when_used: bool = False) -> dict[str, Any]:
    """One JSON section of a plan object (``plan.site`` ...), by the schema
    (:mod:`wzq.io.fields`): each input in the file's units, rounded where the schema
    says. The inputs written only when used (:data:`wzq.io.fields.WHEN_USED_KEYS`)
    are left out unless ``when_used``, which gives only those."""
    out: dict[str, Any] = {}
    for f in F.section_inputs(section):
        if (f.key in F.WHEN_USED_KEYS) != when_used:
            continue
        value = F.to_file(f, getattr(obj, f.attribute.split(".", 1)[1]), system)
        out[f.key.split(".", 1)[1]] = _rounded(value) if f.rounded else value
    return out


def plan_to_dict(plan: Plan) -> dict[str, Any]:
    """The JSON structure of a plan, in the plan's own unit system."""
    s = plan.site
    system = s.unit_system
    out: dict[str, Any] = {
        "format": FORMAT,
        "version": VERSION,
        "units": system,
        "meta": _write_section(plan.meta, "meta", system),
        "site": _write_section(s, "site", system),
        "demand": {
            "start": _iso(plan.demand.start),
            "interval_minutes": plan.demand.interval_s / 60,
            "veh_h": [float(v) for v in plan.demand.flows_veh_h],
        },
        "closures": [
            {
                "start": _iso(c.start),
                "end": _iso(c.end),
                "lanes_closed": c.lanes_closed,
                "barrier": c.barrier,
                "night": c.night,
                "capacity_override_veh_h_ln": c.capacity_override_veh_h_ln,
                "note": c.note,
            }
            for c in plan.closures
        ],
        "thresholds": _write_section(plan.thresholds, "thresholds", system),
        "options": _write_section(plan.options, "options", system),
    }
    if plan.history is not None and plan.history.file:  # the count history, not the flows
        hours = len(plan.demand.flows_veh_h) * plan.demand.interval_s / 3600
        out["demand"] = history_to_dict(plan.history, plan.demand.start, round(hours))
    if plan.risk is not None:
        out["risk"] = risk_to_dict(plan.risk)
    if s.congested_branch != "derived":
        out["site"].update(_write_section(s, "site", system, when_used=True))
    if plan.thresholds.queue_must_not_pass is not None:
        out["thresholds"]["queue_must_not_pass"] = plan.thresholds.queue_must_not_pass
    if plan.approach.landmarks:
        out["approach"] = {
            "landmarks": [_landmark_dict(lm, system) for lm in plan.approach.landmarks]
        }
    if plan.costs is not None:
        out["costs"] = _write_section(plan.costs, "costs", system)
    return out


def _landmark_dict(lm: Landmark, system: u.UnitSystem) -> dict[str, Any]:
    out: dict[str, Any] = {
        "name": lm.name,
        "distance": round(u.m_to_long_length(lm.distance, system), 6),
        "kind": lm.kind,
    }
    if lm.ramp_veh_h is not None:
        out["veh_h"] = list(lm.ramp_veh_h)
    if lm.ramp_share is not None:
        out["share_percent"] = round(lm.ramp_share * 100.0, 9)
    return out


def save_plan(plan: Plan, path: str | Path) -> None:
    """Write a plan as JSON (UTF-8, indented)."""
    Path(path).write_text(json.dumps(plan_to_dict(plan), indent=2) + "\n", encoding="utf-8")
