"""Render the pictures of docs/libreoffice_calc.md from a real press in LibreOffice Calc.

An invented plan (the fictional Brackenford Parkway) is written as a filled
workbook; the Recalculate plan command is installed with ``wzq calc install``
into a private LibreOffice profile; a headless LibreOffice opens the plan, a
demand cell is changed without saving, the command is pressed, and the sheets
of the reloaded document are exported to PDF by LibreOffice and turned into
PNG by poppler's ``pdftoppm``. A second press on a plan with two input mistakes
gives the problems dialog's text. Run from the repository root::

    python3 docs/calc_screenshots.py

Needs LibreOffice (soffice, unopkg), a Python with ``uno`` and poppler-utils,
as the end-to-end test does.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

import openpyxl  # noqa: E402
from office_session import Office, uno_python  # noqa: E402
from workbook_helpers import table_cell  # noqa: E402

from wzq.cli.calc import office_env  # noqa: E402
from wzq.io.jsonplan import plan_from_dict  # noqa: E402
from wzq.io.office.build import script_url  # noqa: E402
from wzq.io.office.icons import draw  # noqa: E402
from wzq.io.workbook import layout  # noqa: E402
from wzq.io.workbook.run import write_filled_workbook  # noqa: E402

OUT = ROOT / "docs" / "img"

#: An invented scenario: a two-night closure of two of three lanes on a fictional parkway.
PLAN = {
    "format": "wzq-plan",
    "version": 1,
    "units": "us",
    "meta": {
        "title": "Brackenford Parkway joint repair, northbound (invented example)",
        "project": "Demo 03 - invented scenario",
        "route": "Brackenford Parkway NB, Millbrook Falls to Oster Lane (fictional)",
        "prepared_by": "",
        "checked_by": "",
        "notes": "Invented data for demonstration only.",
    },
    "site": {
        "name": "Brackenford Parkway, Millbrook Falls to Oster Lane",
        "direction": "northbound",
        "lanes": 3,
        "speed_limit": 60,
        "work_zone_speed_limit": 45,
        "free_flow_speed": None,
        "work_zone_length": 1.2,
        "heavy_vehicle_percent": 8,
        "terrain": "level",
        "area_type": "urban",
        "lateral_clearance": 2,
        "driver_population": "commuter",
        "jam_density": None,
        "ramp_density": 1.0,
        "capacity_method": "hcm7",
        "base_capacity_pc_h_ln": None,
        "capacity_drop_percent_work_zone": 13.4,
        "capacity_drop_percent_open": 7.0,
        "work_intensity_pc_h_ln": 0,
        "ramp_adjustment_pc_h_ln": 0,
    },
    "demand": {
        "start": "2027-09-13T00:00",
        "interval_minutes": 60,
        "veh_h": [
            *(620, 430, 350, 330, 420, 980, 2350, 3900, 4300, 3500, 2900, 2800),
            *(2850, 2800, 2900, 3300, 3900, 4200, 3600, 2700, 2100, 1800, 1500, 1050),
            *(640, 440, 360, 340, 430, 1000, 2400, 3950, 4350, 3550, 2950, 2850),
            *(2900, 2850, 2950, 3350, 3950, 4250, 3650, 2750, 2150, 1850, 1550, 1100),
            *(650, 450, 360, 340, 430, 1000, 2400, 3950, 4350, 3550, 2950, 2850),
            *(2900, 2850, 2950, 3350, 3950, 4250, 3650, 2750, 2150, 1850, 1550, 1100),
        ],
    },
    "closures": [
        {
            "start": "2027-09-13T21:00",
            "end": "2027-09-14T05:00",
            "lanes_closed": 2,
            "barrier": "soft",
            "night": True,
            "note": "Night 1: joints, lanes 2 and 3",
        },
        {
            "start": "2027-09-14T21:00",
            "end": "2027-09-15T05:00",
            "lanes_closed": 2,
            "barrier": "soft",
            "night": True,
            "note": "Night 2: joints, lanes 1 and 2",
        },
    ],
    "thresholds": {
        "max_queue_length": 1.0,
        "max_average_delay_min": 10,
        "max_demand_capacity": 1.0,
    },
}
#: The designer's late change: more traffic at 21:00 on the first night (a stadium event).
EDIT_INDEX, EDIT_VALUE = 21, 2400.0


def png(pdf: Path, name: str, *, crop: tuple[int, int, int, int] | None = None) -> Path:
    """The first page of ``pdf`` as docs/img/NAME.png (100 dpi, optionally cropped)."""
    target = OUT / name
    args = ["pdftoppm", "-png", "-r", "100", "-f", "1", "-l", "1", "-singlefile"]
    if crop:
        x, y, w, h = crop
        args += ["-x", str(x), "-y", str(y), "-W", str(w), "-H", str(h)]
    subprocess.run([*args, str(pdf), str(target.with_suffix(""))], check=True, timeout=120)
    return target


def main() -> None:
    OUT.mkdir(parents=True, exist_ok=True)
    python = uno_python()
    if not (shutil.which("soffice") and shutil.which("unopkg") and python):
        sys.exit("needs LibreOffice (soffice, unopkg) and a Python with uno")
    from wzq.io.jsonplan import save_plan

    with tempfile.TemporaryDirectory(prefix="wzq-calc-docs-") as tmp:
        folder = Path(tmp)
        plan = plan_from_dict(PLAN)
        save_plan(plan, folder / "brackenford.json")
        path = folder / "brackenford.xlsx"
        write_filled_workbook(plan, path)
        install = [sys.executable, "-m", "wzq", "calc", "install", "--profile", tmp + "/p"]
        if os.geteuid() == 0:  # unopkg refuses per-user installs as root
            install = ["unshare", "--user", "--map-user=1000", "--map-group=1000", *install]
        subprocess.run(install, check=True, timeout=300)
        env = office_env()
        if os.environ.get("PYTHONPATH"):
            env["PYTHONPATH"] = os.environ["PYTHONPATH"]
        office = Office(folder / "p", python, env=env)
        try:
            office.call("set_setting", name="SaveWithoutAsking", value=True)
            office.call("open", path=str(path))
            book = openpyxl.load_workbook(path)
            cell = table_cell(book, layout.DEMAND_TABLE, EDIT_INDEX, layout.DEMAND_COLUMNS[2])
            office.call("set_cell", sheet=layout.DEMAND, cell=cell.coordinate, value=EDIT_VALUE)
            print(office.call("press_script", url=script_url()))
            for sheet, name, crop in (
                (layout.SUMMARY, "calc_summary.png", (36, 36, 780, 360)),
                (layout.PERMIT_TABLE, "calc_permit_table.png", (36, 36, 1030, 480)),
                (layout.CHARTS, "calc_charts.png", (36, 36, 620, 800)),
            ):
                pdf = folder / f"{name}.pdf"
                office.call("export_pdf", sheet=sheet, path=str(pdf))
                print("wrote", png(pdf, name, crop=crop))
            # two mistakes a designer might make: a unit typed into a demand cell, and
            # more lanes closed than the road has
            office.call("set_cell", sheet=layout.DEMAND, cell=cell.coordinate, value="2400 vph")
            lanes = table_cell(book, layout.CLOSURE_TABLE, 1, layout.CLOSURE_COLUMNS[3])
            office.call("set_cell", sheet=layout.CLOSURES, cell=lanes.coordinate, value=3.0)
            print("\n--- the problems dialog ---\n" + office.call("press_script", url=script_url()))
        finally:
            office.stop()
    draw(104).save(OUT / "calc_icon.png")
    print("wrote", OUT / "calc_icon.png")


if __name__ == "__main__":
    main()
