"""Orbit projections x-y, x-z, y-z of the damped and undamped runs, with linked zoom."""

import numpy as np
import panel as pn
from bokeh.models import ColumnDataSource, DataRange1d
from panel.viewable import Viewer

from ..format import LENGTH_UNITS, pick_unit
from .decimate import MAX_ORBIT_POINTS, stride_indices
from .palette import RUN_LABELS, RUN_STYLES, START_COLOR, new_figure, style_legend

RUNS = ("damped", "undamped")
#: (title, horizontal axis, vertical axis) of each projection
PROJECTIONS = (("x-y", "x", "y"), ("x-z", "x", "z"), ("y-z", "y", "z"))
#: margin around the orbit when a window is fitted to it (display only)
FIT_MARGIN = 1.15


def _empty_orbit():
    return {"x": [], "y": [], "z": []}


def prepare_orbits(comparison):
    """Decimated orbit coordinates in a common display unit, plus the orbit's bounding box.

    Parameters
    ----------
    comparison : tracker.Comparison

    Returns
    -------
    dict
        ``units`` {axis: label} and ``scales`` {axis: m per unit}, one unit per axis so a
        thin orbit keeps readable ticks; ``runs`` {name: {x, y, z}}, ``start`` and ``ends``
        in those units; ``box`` = (centre (3,) m, half-width m) or None; ``plane``: the
        projection with the largest spread ('x-y', 'x-z' or 'y-z').
    """
    results = {name: getattr(comparison, name) for name in RUNS}
    points = [r.x for r in results.values() if len(r.x)]
    if not points:
        return {"units": dict.fromkeys("xyz", "m"), "scales": dict.fromkeys("xyz", 1.0),
                "runs": {n: _empty_orbit() for n in RUNS}, "start": None, "ends": {}, "box": None, "plane": "x-y"}
    allx = np.concatenate(points)
    lo, hi = allx.min(axis=0), allx.max(axis=0)
    units, scales = {}, {}
    for i, axis in enumerate("xyz"):
        units[axis], scales[axis] = pick_unit(max(float(np.max(np.abs(allx[:, i]))), float(hi[i] - lo[i])),
                                              LENGTH_UNITS)
    per_axis = np.array([scales[a] for a in "xyz"])
    runs, ends = {}, {}
    for name, r in results.items():
        if not len(r.x):
            runs[name] = _empty_orbit()
            continue
        idx = stride_indices(len(r.x), MAX_ORBIT_POINTS)
        xs = r.x[idx] / per_axis
        runs[name] = {"x": xs[:, 0], "y": xs[:, 1], "z": xs[:, 2]}
        ends[name] = (r.x[-1] / per_axis).tolist()
    start = (results["damped"].x[0] / per_axis).tolist() if len(results["damped"].x) else None
    centre = 0.5 * (lo + hi)
    spread = hi - lo
    half = 0.5 * float(np.max(spread)) * FIT_MARGIN
    box = (centre, half) if half > 0 else None
    widest = sorted(np.argsort(spread)[-2:])
    plane = f"{'xyz'[widest[0]]}-{'xyz'[widest[1]]}"
    return {"units": units, "scales": scales, "runs": runs, "start": start, "ends": ends, "box": box,
            "plane": plane}


class OrbitView(Viewer):
    """Three projections sharing their axes: zoom in one and the others follow."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        ranges = {axis: DataRange1d() for axis in "xyz"}
        self.sources = {name: ColumnDataSource(_empty_orbit()) for name in RUNS}
        self.ends = {name: ColumnDataSource(_empty_orbit()) for name in RUNS}
        self.start = ColumnDataSource(_empty_orbit())
        self.figures = []
        for title, a, b in PROJECTIONS:
            fig = new_figure(f"orbit, {title} projection", f"{a} (m)", f"{b} (m)", height=330,
                             x_range=ranges[a], y_range=ranges[b])
            for name in RUNS:
                fig.line(a, b, source=self.sources[name], legend_label=RUN_LABELS[name], **RUN_STYLES[name])
                fig.scatter(a, b, source=self.ends[name], size=7, marker="square",
                            color=RUN_STYLES[name]["color"], legend_label=RUN_LABELS[name])
            fig.scatter(a, b, source=self.start, size=9, marker="circle", fill_color="white",
                        line_color=START_COLOR, line_width=2, legend_label="start")
            style_legend(fig)
            self.figures.append(fig)
        self._layout = pn.Row(*[pn.pane.Bokeh(f, sizing_mode="stretch_width") for f in self.figures],
                              sizing_mode="stretch_width")
        state.param.watch(self._show, "prepared")
        self._show()

    def __panel__(self):
        return self._layout

    def _show(self, *_):
        prepared = self.state.prepared
        if not prepared:
            return
        data = prepared["orbits"]
        for name in RUNS:
            self.sources[name].data = data["runs"][name]
            end = data["ends"].get(name)
            self.ends[name].data = ({"x": [end[0]], "y": [end[1]], "z": [end[2]]} if end else _empty_orbit())
        start = data["start"]
        self.start.data = {"x": [start[0]], "y": [start[1]], "z": [start[2]]} if start else _empty_orbit()
        for fig, (_title, a, b) in zip(self.figures, PROJECTIONS):
            fig.xaxis.axis_label = f"{a} ({data['units'][a]})"
            fig.yaxis.axis_label = f"{b} ({data['units'][b]})"
