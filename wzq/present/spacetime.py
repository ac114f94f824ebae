"""The space-time picture of the approach: distance upstream against time, shaded by speed.

Drawn from an LWR simulation (:func:`wzq.engine.lwr.simulation.simulate`): each cell of the
approach at each kept instant is shaded by its speed (dark for stopped
traffic, light for free flow, in greys so that it prints the same in black and
white), the back of the queue found by the simulation is traced as a solid
line, and the engine's own back of queue (Newell's method or the single-state
shockwave relation, :mod:`wzq.models.newell`, :mod:`wzq.models.shockwave`) as a dashed line
beside it, so a reader sees at a glance whether the two agree. Closures are
drawn as numbered bars in a strip of their own under the picture, so they never
cover a short queue near the closure (distance 0).

Matplotlib without pyplot and without global state (``Figure`` and the Agg
canvas), so it is safe in threads and in batch runs. :func:`space_time_png`
returns PNG bytes and, given a path, writes them (to a temporary file first,
then moved into place).

Distances and speeds are shown in the plan's own unit system (mi and mi/h, or
km and km/h), converted with :mod:`wzq.units`.
"""

from __future__ import annotations

import io

import matplotlib.dates as mdates
import numpy as np
import pandas as pd
from matplotlib import patheffects
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import LinearSegmentedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

import wzq
from wzq import units as u
from wzq.engine.lwr.simulation import Simulation, simulate
from wzq.engine.plan import Plan
from wzq.engine.results import Result, Run
from wzq.present.figures import time_axis

__all__ = ["SPEED_SHADES", "space_time_figure", "space_time_png"]

#: Speed shading: dark grey for stopped traffic to near white at free speed.
SPEED_SHADES = LinearSegmentedColormap.from_list(
    "wzq-speed", [(0.0, "0.10"), (0.35, "0.40"), (0.7, "0.75"), (1.0, "0.97")]
)
#: Line shades and the closure mark.
INK = "0.0"
CLOSURE_MARK = "0.25"
#: Landmarks upstream of the closure: thin dash-dot lines, named.
LANDMARK_INK = "0.15"
#: Most points drawn along a back-of-queue line.
MAX_LINE_POINTS = 4000
#: Figure size (inches) and resolution of the PNG.
FIGSIZE = (9.0, 5.0)
DPI = 150


def _clock(sim: Simulation, seconds: np.ndarray) -> np.ndarray:
    """Matplotlib date numbers of seconds from the demand start."""
    start = pd.Timestamp(sim.run.plan.demand.start)
    stamps = start + pd.to_timedelta(np.asarray(seconds, dtype=float), unit="s")
    return mdates.date2num(stamps.to_pydatetime())


def _thin(t: np.ndarray, y: np.ndarray, most: int) -> tuple[np.ndarray, np.ndarray]:
    """At most ``most`` points of a line, keeping every local peak of each stride."""
    if len(t) <= most:
        return t, y
    stride = int(np.ceil(len(t) / most))
    n = len(t) // stride * stride
    blocks = y[:n].reshape(-1, stride)
    pick = np.arange(0, n, stride) + blocks.argmax(axis=1)
    pick = np.concatenate((pick, np.arange(n, len(t)), [len(t) - 1]))
    pick = np.unique(np.concatenate(([0], pick)))
    return t[pick], y[pick]


def _queue_line(t: np.ndarray, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The line with the no-queue stretches left out (NaN), so it is drawn only where a queue is."""
    d = d.astype(float).copy()
    none = d <= 0
    # keep the zero next to a queue so the line starts and ends on the axis
    edge = none & (np.roll(~none, 1) | np.roll(~none, -1))
    d[none & ~edge] = np.nan
    return t, d


#: Share of the window at each end looked at to place a landmark's name where no queue is.
LABEL_END = 0.3


def _label_side(sim: Simulation, distance_m: float) -> float:
    """Where along the picture (axes fraction) a landmark's name goes: the end of the
    window (the last or the first :data:`LABEL_END` of it) where the engine's queue
    covers the landmark less often, the right end when they tie."""
    a, b = sim.window
    span = b - a

    def covered(lo: float, hi: float) -> float:
        t = np.linspace(lo, hi, 200)
        return float(np.mean(sim.engine_queue_length_m(t) >= distance_m))

    left = covered(a, a + LABEL_END * span)
    right = covered(b - LABEL_END * span, b)
    return 0.005 if left < right else 0.995


def _landmark_lines(ax, sim: Simulation, top: float, long_m: float, long_name: str) -> None:
    """Each landmark of the approach within the picture as a thin line across it, named
    at the end of the picture where the queue is not (white halo, so the line and the
    name read on dark and light shades alike)."""
    plan = sim.run.plan
    halo = [patheffects.withStroke(linewidth=2.4, foreground="white")]
    limit = plan.thresholds.queue_must_not_pass
    for lm in sorted(plan.approach.landmarks, key=lambda lm: lm.distance):
        y = lm.distance / long_m
        if y > top:
            continue
        x = _label_side(sim, lm.distance)
        is_limit = lm.name == limit
        ax.axhline(
            y,
            color=LANDMARK_INK,
            lw=1.1 if is_limit else 0.7,
            ls=(0, (6, 2, 1, 2)),
            path_effects=halo,
            zorder=3,
        )
        ax.annotate(
            f"{lm.name} ({y:,.2f} {long_name})" + (": must not pass" if is_limit else ""),
            xy=(x, y),
            xycoords=("axes fraction", "data"),
            xytext=(0, 1.5),
            textcoords="offset points",
            ha="left" if x < 0.5 else "right",
            va="bottom",
            fontsize=7,
            color=LANDMARK_INK,
            path_effects=halo,
            zorder=6,
        )


def space_time_figure(sim: Simulation, *, title: str | None = None, caution: bool = True) -> Figure:
    """The space-time picture of a simulation as a matplotlib :class:`~matplotlib.figure.Figure`."""
    plan = sim.run.plan
    system = plan.site.unit_system
    long_name, long_m = u.LONG_LENGTH[system]
    speed_name, speed_ms = u.SPEED[system]

    fig = Figure(figsize=FIGSIZE, layout="constrained")
    FigureCanvasAgg(fig)
    ax, strip = fig.subplots(2, 1, sharex=True, height_ratios=[14, 1])

    # speed field: rows = cells from the closure upstream, columns = kept instants
    speed = sim.speed[:, ::-1].T / speed_ms
    top = sim.length_m / long_m
    x = _clock(sim, sim.times)
    v_free = float(sim.diagram.speed(0.0)) / speed_ms
    image = ax.imshow(
        speed,
        extent=(x[0], x[-1], 0.0, top),
        origin="lower",
        aspect="auto",
        interpolation="nearest",
        cmap=SPEED_SHADES,
        vmin=0.0,
        vmax=v_free,
    )
    bar = fig.colorbar(image, ax=[ax, strip], pad=0.01, fraction=0.04)
    bar.set_label(f"Speed ({speed_name})")

    # back of the queue: the simulation's and the engine's
    halo = [patheffects.withStroke(linewidth=3.2, foreground="white")]
    t_lev, back = _thin(sim.levels, sim.back_of_queue_m, MAX_LINE_POINTS)
    t_line, d_line = _queue_line(t_lev, back / long_m)
    ax.plot(_clock(sim, t_line), d_line, color=INK, lw=1.6, path_effects=halo, zorder=4)
    t_eng = np.linspace(sim.window[0], sim.window[1], MAX_LINE_POINTS)
    newell = getattr(sim.run, "back_of_queue", None)
    if newell is not None:  # its exact vertices too, so peaks are not cut off
        inside = (newell.times >= sim.window[0]) & (newell.times <= sim.window[1])
        t_eng = np.union1d(t_eng, newell.times[inside])
    t_e, d_e = _queue_line(t_eng, sim.engine_queue_length_m(t_eng) / long_m)
    ax.plot(_clock(sim, t_e), d_e, color=INK, lw=1.1, ls=(0, (4, 2.5)), path_effects=halo, zorder=5)

    _landmark_lines(ax, sim, top, long_m, long_name)

    # closures in a strip of their own under the picture, numbered as in the plan
    start = plan.demand.start
    for i, c in enumerate(plan.closures, start=1):
        a = max((c.start - start).total_seconds(), sim.window[0])
        b = min((c.end - start).total_seconds(), sim.window[1])
        if b > a:
            x0, x1 = _clock(sim, np.array([a, b]))
            strip.axvspan(x0, x1, color=CLOSURE_MARK, lw=0)
            strip.text(
                0.5 * (x0 + x1), 0.5, str(i), color="white", ha="center", va="center",
                fontsize=7, fontweight="bold", clip_on=True,
            )  # fmt: skip
    strip.set_yticks([])
    strip.set_ylim(0, 1)
    strip.set_ylabel("Closure", rotation=0, ha="right", va="center", fontsize=8)
    strip.set_xlabel("Time (local clock)")

    method = "Newell" if sim.engine_method == "newell" else "shockwave"
    handles = [
        Line2D([], [], color=INK, lw=1.6, label="Back of queue, LWR simulation"),
        Line2D([], [], color=INK, lw=1.1, ls=(0, (4, 2.5)), label=f"Back of queue, {method}"),
    ]
    if any(lm.distance / long_m <= top for lm in plan.approach.landmarks):
        handles.append(
            Line2D([], [], color=LANDMARK_INK, lw=0.7, ls=(0, (6, 2, 1, 2)), label="Landmark")
        )
    ax.legend(handles=handles, loc="upper right", framealpha=0.9)
    ax.set_ylim(0.0, top)
    ax.set_xlim(x[0], x[-1])
    ax.set_ylabel(f"Distance upstream of the closure ({long_name})")
    # the axes span about 80 % of the figure once laid out (colour bar, labels)
    time_axis(strip, (sim.window[1] - sim.window[0]) / u.HOUR, 0.8 * FIGSIZE[0])
    ax.tick_params(labelbottom=False)

    heading = title or plan.meta.title or plan.site.name or "Lane-closure plan"
    ax.set_title(heading, loc="left", fontsize=10)
    f = sim.field
    diagram = type(sim.diagram).__name__
    note = (
        f"Kinematic-wave (LWR) simulation, Godunov scheme: {diagram} diagram, "
        f"{len(f.x)} cells of {f.dx / u.SHORT_LENGTH[system][1]:,.0f} "
        f"{u.SHORT_LENGTH[system][0]}, time step {f.dt:.2f} s"
    )
    if sim.spilled:
        note += "; the queue reached the upstream end of the modelled stretch"
    footer = note + (f"\n{wzq.CAUTION}" if caution else "")
    fig.supxlabel(footer, x=0.01, ha="left", fontsize=7, linespacing=1.6)
    return fig


def space_time_png(
    result_or_sim: Simulation | Result | Run | Plan,
    *,
    dpi: int = DPI,
    title: str | None = None,
    caution: bool = True,
    **simulate_options: object,
) -> bytes:
    """PNG bytes of the space-time picture (the adapters write them to a file).

    ``result_or_sim`` is a :class:`~wzq.engine.lwr.simulation.Simulation`, or a result, run or
    plan that is simulated first with ``simulate_options`` (the keywords of
    :func:`wzq.engine.lwr.simulation.simulate`).
    """
    if isinstance(result_or_sim, Simulation):
        if simulate_options:
            raise TypeError("simulate options apply only when a result, run or plan is given")
        sim = result_or_sim
    else:
        sim = simulate(result_or_sim, **simulate_options)  # type: ignore[arg-type]
    fig = space_time_figure(sim, title=title, caution=caution)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": f"wzq {wzq.__version__}"})
    return buf.getvalue()
