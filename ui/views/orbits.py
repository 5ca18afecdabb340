"""Orbit projections x-y, x-z, y-z of the damped and undamped runs, with linked zoom.

The three plots share one range per coordinate (x-y and x-z share x, and so on), so
zooming one moves the others. With "same scale on all axes" a circle looks round;
without it each coordinate gets its own unit and span, which keeps a nanometre
wiggle on a micrometre path visible.
"""

import numpy as np
import panel as pn
from bokeh.models import ColumnDataSource, Range1d
from panel.viewable import Viewer

from ..format import LENGTH_UNITS, pick_unit
from ..theme import html_pane
from .decimate import MAX_ORBIT_POINTS, stride_indices
from .document import apply_to_models
from .palette import RUN_STYLES, START_COLOR, new_figure, style_legend

RUNS = ("damped", "undamped")
AXES = "xyz"
#: (title, horizontal axis, vertical axis) of each projection
PROJECTIONS = (("x-y", "x", "y"), ("x-z", "x", "z"), ("y-z", "y", "z"))
#: margin around the orbit in plots and fitted windows (display only)
FIT_MARGIN = 1.15
#: equal axis scales are proposed when the widest span is at most this many times the
#: second widest (common practice, no source: beyond it the narrow direction is invisible)
EQUAL_SCALE_RATIO = 20.0
#: plot frame size in px (three fit beside the sidebar on a 1600 px screen)
FRAME = 285


def _empty_orbit():
    return {"x": [], "y": [], "z": []}


def prepare_orbits(comparison):
    """Decimated orbits in SI plus their extent (runs on the worker thread).

    Parameters
    ----------
    comparison : tracker.Comparison

    Returns
    -------
    dict
        ``runs`` {name: {x, y, z}} in m (decimated for drawing), ``start`` and ``ends``
        (m), ``lo``/``hi`` (3,) m, ``box`` = (centre (3,) m, half-width m) or None,
        ``plane`` with the two widest spans ('x-y', 'x-z' or 'y-z'), ``equal`` whether
        equal axis scales suit this orbit.
    """
    results = {name: getattr(comparison, name) for name in RUNS}
    points = [r.x for r in results.values() if len(r.x)]
    if not points:
        return {"runs": {n: _empty_orbit() for n in RUNS}, "start": None, "ends": {}, "lo": None, "hi": None,
                "box": None, "plane": "x-y", "equal": True}
    allx = np.concatenate(points)
    lo, hi = allx.min(axis=0), allx.max(axis=0)
    runs, ends = {}, {}
    for name, r in results.items():
        if not len(r.x):
            runs[name] = _empty_orbit()
            continue
        xs = r.x[stride_indices(len(r.x), MAX_ORBIT_POINTS)]
        runs[name] = {"x": xs[:, 0], "y": xs[:, 1], "z": xs[:, 2]}
        ends[name] = r.x[-1].copy()
    start = results["damped"].x[0].copy() if len(results["damped"].x) else None
    spread = hi - lo
    half = 0.5 * float(np.max(spread)) * FIT_MARGIN
    widest = sorted(np.argsort(spread, kind="stable")[-2:])
    ordered = np.sort(spread)
    return {"runs": runs, "start": start, "ends": ends, "lo": lo, "hi": hi,
            "box": (0.5 * (lo + hi), half) if half > 0 else None,
            "plane": f"{AXES[widest[0]]}-{AXES[widest[1]]}",
            "equal": bool(ordered[1] > 0 and ordered[2] <= EQUAL_SCALE_RATIO * ordered[1])}


def axis_frames(lo, hi, equal):
    """Per axis (unit label, m per unit, range start, range end in that unit).

    Equal scales: one unit and one span for all three axes. Otherwise each axis gets
    its own; an axis the orbit does not move along borrows the widest span.
    """
    lo, hi = np.asarray(lo, dtype=float), np.asarray(hi, dtype=float)
    centre, spread = 0.5 * (lo + hi), hi - lo
    widest = float(np.max(spread)) or max(float(np.max(np.abs(centre))), 1.0)
    frames = {}
    common = pick_unit(max(widest, float(np.max(np.abs(np.concatenate([lo, hi]))))), LENGTH_UNITS)
    for i, axis in enumerate(AXES):
        flat = spread[i] <= 1e-9 * widest
        half = 0.5 * FIT_MARGIN * (widest if (equal or flat) else spread[i])
        if equal:
            label, scale = common
        else:
            label, scale = pick_unit(max(abs(lo[i]), abs(hi[i]), half), LENGTH_UNITS)
        frames[axis] = (label, scale, (centre[i] - half) / scale, (centre[i] + half) / scale)
    return frames


class OrbitView(Viewer):
    """Three projections sharing their axes: zoom in one and the others follow."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self.ranges = {axis: Range1d(-1, 1) for axis in AXES}
        self.sources = {name: ColumnDataSource(_empty_orbit()) for name in RUNS}
        self.ends = {name: ColumnDataSource(_empty_orbit()) for name in RUNS}
        self.start = ColumnDataSource(_empty_orbit())
        self.figures = []
        for title, a, b in PROJECTIONS:
            # square frames: with equal spans on every axis a circle stays round
            fig = new_figure(f"orbit, {title} projection", f"{a} (m)", f"{b} (m)", height=FRAME,
                             frame_width=FRAME, x_range=self.ranges[a], y_range=self.ranges[b])
            for name in RUNS:
                fig.line(a, b, source=self.sources[name], legend_label=name, **RUN_STYLES[name])
                fig.scatter(a, b, source=self.ends[name], size=7, marker="square",
                            color=RUN_STYLES[name]["color"], legend_label=name)
            fig.scatter(a, b, source=self.start, size=9, marker="circle", fill_color="white",
                        line_color=START_COLOR, line_width=2, legend_label="start")
            style_legend(fig)
            self.figures.append(fig)
        self.equal = pn.widgets.Checkbox(label="same scale on all axes", value=True, margin=(6, 8),
                                         css_classes=["orbit-equal"])
        self.equal.param.watch(self._show, "value")
        self._layout = pn.Column(
            pn.Row(self.equal, html_pane('<span class="ro-note">squares: end points · circle: start · '
                                         "a click on a legend entry hides that curve</span>", margin=(10, 8)),
                   margin=0),
            # a fixed-size row: a stretching row would widen the square frames
            pn.Row(*[pn.pane.Bokeh(f) for f in self.figures]),
            sizing_mode="stretch_width", margin=0)
        state.param.watch(self._new_result, "prepared")
        self._new_result()

    def __panel__(self):
        return self._layout

    def _new_result(self, *_):
        prepared = self.state.prepared
        if not prepared:
            return
        suggested = prepared["orbits"]["equal"]
        if self.equal.value != suggested:
            self.equal.value = suggested  # triggers _show
        else:
            self._show()

    def _show(self, *_):
        prepared = self.state.prepared
        if not prepared or prepared["orbits"]["lo"] is None:
            return
        data = prepared["orbits"]
        frames = axis_frames(data["lo"], data["hi"], self.equal.value)
        scale = {axis: frames[axis][1] for axis in AXES}

        def scaled(point):
            return {axis: [point[i] / scale[axis]] for i, axis in enumerate(AXES)}

        runs = {name: {axis: np.asarray(run[axis]) / scale[axis] for axis in AXES}
                for name, run in data["runs"].items()}

        def change():
            for name in RUNS:
                self.sources[name].data = runs[name]
                end = data["ends"].get(name)
                self.ends[name].data = scaled(end) if end is not None else _empty_orbit()
            self.start.data = scaled(data["start"]) if data["start"] is not None else _empty_orbit()
            for axis, (_label, _scale, start, end) in frames.items():
                self.ranges[axis].update(start=start, end=end, reset_start=start, reset_end=end)
            for fig, (_title, a, b) in zip(self.figures, PROJECTIONS):
                fig.xaxis.axis_label = f"{a} ({frames[a][0]})"
                fig.yaxis.axis_label = f"{b} ({frames[b][0]})"

        apply_to_models(change)
