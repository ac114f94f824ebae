"""Tests for wzq.present.spacetime (the space-time picture) and ``wzq spacetime``
(wzq.cli.spacetime).

The picture is checked by what it shows: the pixels inside the simulated
queue are dark and those in free flow light, the traced lines are the
simulation's and the engine's back of queue, the labels are in the plan's
units. All sites and numbers are invented.
"""

from __future__ import annotations

import datetime as dt
import io
import json

import matplotlib.dates as mdates
import matplotlib.image as mpimg
import numpy as np
import pytest

import wzq
from wzq import cli
from wzq import units as u
from wzq.engine import lwr
from wzq.io.jsonplan import plan_to_dict
from wzq.io.workbook.save import write_atomically
from wzq.present.spacetime import DPI, FIGSIZE, space_time_figure, space_time_png

START = dt.datetime(2031, 3, 4, 0, 0)
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def larkspur_plan(unit_system: str = "metric") -> wzq.Plan:
    """Invented: two lanes, steady 2,400 veh/h, one lane closed 01:00-01:30 at 1,500 veh/h."""
    site = wzq.Site(
        lanes=2,
        speed_limit=u.kmh_to_mps(100),
        work_zone_speed_limit=u.kmh_to_mps(80),
        work_zone_length=1000.0,
        heavy_vehicle_share=0.05,
        unit_system=unit_system,
        name="Larkspur Vale Bypass near Amberfold (invented)",
    )
    demand = wzq.Demand(START, 3600, np.full(4, 2400.0))
    closure = wzq.Closure(
        START + dt.timedelta(hours=1),
        START + dt.timedelta(hours=1, minutes=30),
        1,
        capacity_override_veh_h_ln=1500.0,
    )
    return wzq.Plan(site, demand, (closure,), options=wzq.Options(capacity_drop=False))


@pytest.fixture(scope="module")
def sim():
    return lwr.simulate(larkspur_plan(), length_m=6000.0, cells=120)


def pixel(fig, ax, when: dt.datetime, distance: float) -> float:
    """Grey level (0 black, 1 white) drawn at a time and a distance (axis units)."""
    canvas = fig.canvas
    canvas.draw()
    rgba = np.asarray(canvas.buffer_rgba())
    x, y = ax.transData.transform((mdates.date2num(when), distance))
    row = rgba.shape[0] - int(np.rint(y))
    return float(rgba[row, int(np.rint(x)), :3].mean()) / 255.0


def test_png_bytes_size_and_file(sim, tmp_path):
    out = tmp_path / "larkspur.png"
    data = space_time_png(sim)
    write_atomically(out, data)  # as wzq spacetime writes it
    assert data.startswith(PNG_SIGNATURE)
    assert out.read_bytes() == data
    image = mpimg.imread(io.BytesIO(data), format="png")
    assert image.shape[:2] == (round(FIGSIZE[1] * DPI), round(FIGSIZE[0] * DPI))
    assert sorted(p.name for p in tmp_path.iterdir()) == ["larkspur.png"]  # no temporary left


def test_shading_is_dark_in_the_queue_and_light_in_free_flow(sim):
    # At 01:25 the back of the queue is |u| * 25 min upstream: about 2.6 km here
    # (|u| = 1.76 m/s, worked out in tests/engine/test_lwr.py). Queued traffic moves at
    # q_Q/k_Q, about 9 km/h of 108: dark; free flow at the free-flow speed: light.
    fig = space_time_figure(sim)
    ax = fig.axes[0]
    at = START + dt.timedelta(hours=1, minutes=25)
    assert 2.3 < float(np.interp(5100.0, sim.levels, sim.back_of_queue_m)) / 1000.0 < 2.9
    assert pixel(fig, ax, at, 1.0) < 0.35  # 1 km upstream: inside the queue
    assert pixel(fig, ax, at, 4.5) > 0.85  # 4.5 km upstream: free flow
    assert pixel(fig, ax, START + dt.timedelta(minutes=30), 1.0) > 0.85  # before the closure


def test_lines_are_the_two_backs_of_the_queue(sim):
    fig = space_time_figure(sim)
    ax = fig.axes[0]
    lines = [ln for ln in ax.get_lines() if len(ln.get_xdata()) > 0]
    assert len(lines) == 2
    ours, engine = (np.nanmax(np.asarray(ln.get_ydata(), dtype=float)) for ln in lines)
    assert ours == pytest.approx(sim.max_queue_extent_m / 1000.0, rel=1e-9)
    result = wzq.analyse(larkspur_plan())
    assert engine == pytest.approx(result.summary.max_queue_length_m / 1000.0, rel=1e-6)
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert labels == ["Back of queue, LWR simulation", "Back of queue, Newell"]
    # the closures have a strip of their own under the picture, numbered as in the plan,
    # so no bar covers a short queue near the closure (distance 0)
    strip = fig.axes[1]
    assert strip.get_ylabel() == "Closure"
    assert [t.get_text() for t in strip.texts] == [
        str(i) for i in range(1, len(sim.run.plan.closures) + 1)
    ]
    assert strip.get_xlabel() == "Time (local clock)"
    assert ax.get_ylim()[0] == 0.0


def test_units_follow_the_plan_and_caution_is_shown():
    metric = space_time_figure(lwr.simulate(larkspur_plan("metric"), cells=40))
    us = space_time_figure(lwr.simulate(larkspur_plan("us"), cells=40))
    assert metric.axes[0].get_ylabel() == "Distance upstream of the closure (km)"
    assert us.axes[0].get_ylabel() == "Distance upstream of the closure (mi)"
    # axes: the picture, the closure strip, the colour bar
    assert metric.axes[2].get_ylabel() == "Speed (km/h)"
    assert us.axes[2].get_ylabel() == "Speed (mi/h)"
    assert wzq.CAUTION in metric._supxlabel.get_text()
    # the top of the distance axis is the modelled stretch: default 1.5 x the
    # engine's longest queue + 1 km, rounded up to 500 m
    result = wzq.analyse(larkspur_plan())
    top = np.ceil((1.5 * result.summary.max_queue_length_m + 1000.0) / 500.0) * 0.5
    assert metric.axes[0].get_ylim()[1] == pytest.approx(top)


def test_png_from_a_result_simulates_first(tmp_path):
    result = wzq.analyse(larkspur_plan())
    data = space_time_png(result, cells=40, length_m=5000.0)
    assert data.startswith(PNG_SIGNATURE)
    with pytest.raises(TypeError):
        space_time_png(lwr.simulate(result, cells=40), cells=50)


def test_unwritable_path_leaves_nothing(sim, tmp_path):
    with pytest.raises(FileNotFoundError):
        write_atomically(tmp_path / "missing" / "x.png", space_time_png(sim))
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- command line


@pytest.fixture
def plan_file(tmp_path):
    path = tmp_path / "larkspur.json"
    path.write_text(json.dumps(plan_to_dict(larkspur_plan()), indent=2), encoding="utf-8")
    return path


def test_cli_writes_the_picture_and_prints_the_comparison(plan_file, tmp_path, capsys):
    before = plan_file.read_bytes()
    out = tmp_path / "picture.png"
    assert cli.main(["spacetime", str(plan_file), "-o", str(out), "--cells", "60"]) == 0
    assert out.read_bytes().startswith(PNG_SIGNATURE)
    assert plan_file.read_bytes() == before  # the plan is only read
    text = capsys.readouterr().out
    assert "LWR simulation" in text and "engine (Newell)" in text
    assert "Most vehicles stored  450 veh" in text  # (2400 - 1500) veh/h * 0.5 h, both
    assert wzq.CAUTION in text


@pytest.mark.parametrize(
    ("args", "where"),
    [
        (["-o", "{dir}/picture.txt"], "wzq: -o: the picture is a PNG"),
        (["-o", "{dir}/nowhere/picture.png"], "wzq: -o: the folder"),
        (["-o", "{dir}/picture.png", "--closure", "2"], "wzq: --closure: the plan has 1 closures"),
    ],
)
def test_cli_bad_input_exits_2_and_writes_nothing(plan_file, tmp_path, capsys, args, where):
    before = plan_file.read_bytes()
    argv = ["spacetime", str(plan_file), *[a.format(dir=tmp_path) for a in args]]
    assert cli.main(argv) == 2
    err = capsys.readouterr().err
    assert where in err and "Traceback" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["larkspur.json"]
    assert plan_file.read_bytes() == before


def test_cli_refuses_to_overwrite_the_plan(plan_file, capsys):
    before = plan_file.read_bytes()
    assert cli.main(["spacetime", str(plan_file), "-o", str(plan_file)]) == 2
    assert "that is the plan itself" in capsys.readouterr().err
    assert plan_file.read_bytes() == before
