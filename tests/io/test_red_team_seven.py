"""Round seven of the red team: inputs a work-zone designer types that were read wrongly
without a word.

Each case is worked on the shipped Kestrel Ridge example (a US customary plan), changed
as a designer would in Excel or LibreOffice, and checked for the refusal or warning that
names the cell.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from workbook_helpers import edited

from wzq.engine.plan import PlanError
from wzq.io.workbook.reader import read_plan

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.xlsx"


def _kestrel(tmp_path: Path, change) -> Path:
    return edited(KESTREL, tmp_path, change, "kestrel.xlsx")


def _refusals(path: Path) -> list[str]:
    with pytest.raises(PlanError) as e:
        read_plan(path)
    return [f"{p.where}: {p.message}" for p in e.value.problems]


# -- a unit typed over the unit cell --------------------------------------------------------


def test_a_speed_unit_overtyped_as_km_h_in_a_us_plan_is_refused(tmp_path):
    """The designer of a metric road overtyped the unit cells beside the speed limits
    (Site!C9:C10, a formula showing mi/h) with 'km/h' and typed 80 and 70, instead of
    choosing metric on Start!B14: the sheet shows 80 km/h, and 80 mi/h (129 km/h) was read."""

    def km_h(book):
        ws = book["Site"]
        ws["B9"], ws["C9"], ws["B10"], ws["C10"] = 80, "km/h", 70, "kph"

    before = KESTREL.read_bytes()
    path = _kestrel(tmp_path, km_h)
    typed = path.read_bytes()
    assert _refusals(path) == [
        "Site!C9: the unit beside Speed limit (Site!B9) says 'km/h', but the plan is in US "
        "customary units (Start!B14), so the value is read in mi/h; if it is in km/h, choose "
        "'metric' on Start!B14, else type it in mi/h; then put the unit back (mi/h)",
        "Site!C10: the unit beside Work-zone speed limit (Site!B10) says 'kph', but the plan "
        "is in US customary units (Start!B14), so the value is read in mi/h; if it is in "
        "km/h, choose 'metric' on Start!B14, else type it in mi/h; then put the unit back "
        "(mi/h)",
    ]
    assert path.read_bytes() == typed and KESTREL.read_bytes() == before


def test_a_length_in_metres_beside_a_km_input_of_a_metric_plan_is_refused(tmp_path):
    """A metric plan: the work-zone length typed as 800 with its unit cell overtyped 'm'
    (the plan reads km; 800 km is out of range too, but the unit says why: one problem,
    at the unit) and the queue limit's unit overtyped 'metres' with its 1 (km) left."""

    def metres(book):
        book["Start"]["B14"] = "metric"
        ws = book["Site"]
        ws["B9"], ws["B10"] = 100, 80  # km/h
        ws["B12"], ws["C12"] = 800, "m"
        book["Limits"]["C6"] = "metres"

    said = _refusals(_kestrel(tmp_path, metres))
    assert said == [
        "Site!C12: the unit beside Work-zone length (Site!B12) says 'm', but the plan is in "
        "metric units (Start!B14), so the value is read in km; type it in km; then put the "
        "unit back (km)",
        "Limits!C6: the unit beside Longest allowed queue (Limits!B6) says 'metres', but the "
        "plan is in metric units (Start!B14), so the value is read in km; type it in km; "
        "then put the unit back (km)",
    ]


def test_units_typed_over_the_formulas_that_agree_with_the_plan_are_read(tmp_path):
    """Unit cells pasted as values ('mi/h', 'mph', 'miles', 'veh/mi/ln', 'ft'), a note
    in a unit cell that names no unit, and a cleared unit cell: the plan reads as before."""

    def agreeing(book):
        ws = book["Site"]
        ws["C9"], ws["C10"], ws["C11"], ws["C12"] = "mi/h", "MPH", None, "miles"
        ws["C16"], ws["C19"], ws["C18"] = "feet", "veh/mi/ln", "posted ramps"
        book["Limits"]["C6"] = "mi (from the taper)"
        book["Approach"]["B6"] = "mi"

    plan = read_plan(_kestrel(tmp_path, agreeing))
    base = read_plan(KESTREL)
    assert plan.site == base.site
    assert plan.thresholds == base.thresholds
    assert plan.input_warnings == base.input_warnings


def test_the_landmark_distance_unit_overtyped_is_refused(tmp_path):
    """Approach!B6, the unit row above the landmark distances, overtyped 'km' in a US plan
    with a landmark 2.5 (km) upstream: it was read as 2.5 mi."""

    def km(book):
        ws = book["Approach"]
        ws["B6"] = "km"
        ws["A8"], ws["B8"], ws["C8"] = "Millrace Creek bridge", 2.5, "other"

    assert _refusals(_kestrel(tmp_path, km)) == [
        "Approach!B6: the unit above the landmark distances (LandmarkTable) says 'km', but "
        "the plan is in US customary units (Start!B14), so the distances are read in mi; if "
        "they are in km, choose 'metric' on Start!B14, else type them in mi; then put the "
        "unit back (mi)"
    ]


def test_a_delay_limit_whose_unit_was_overtyped_as_seconds_is_refused(tmp_path):
    """Limits!B7 typed 90 with its unit 'min/veh' overtyped 's/veh': read as 90 min."""

    def seconds(book):
        book["Limits"]["B7"], book["Limits"]["C7"] = 90, "s/veh"

    assert _refusals(_kestrel(tmp_path, seconds)) == [
        "Limits!C7: the unit beside Longest allowed average delay (Limits!B7) says 's/veh', "
        "but the value is read in min/veh; type it in min/veh; then put the unit back "
        "(min/veh)"
    ]
