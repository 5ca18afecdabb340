"""Orbit projections x-y, x-z, y-z of every model run, with linked zoom.

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
from ..theme import checkbox, html_pane
from .decimate import DENSITY_CELLS, MAX_ORBIT_POINTS, PATH_CELLS, density_image, path_indices
from .document import apply_to_models
from .palette import DRAW_ORDER, MODEL_LABELS, MODEL_STYLES, START_COLOR, new_figure, show_legend_items, style_legend
from .runs import reference_model, runs_of

AXES = "xyz"
#: (title, horizontal axis, vertical axis) of each projection
PROJECTIONS = (("x-y", "x", "y"), ("x-z", "x", "z"), ("y-z", "y", "z"))
#: margin around the orbit in plots and fitted windows (display only)
FIT_MARGIN = 1.15
#: equal axis scales are proposed when the widest span is at most this many times the
#: second widest (common practice, no source: beyond it the narrow direction is invisible)
EQUAL_SCALE_RATIO = 20.0
#: plot frame size in px (three fit beside the sidebar on a 1600 px screen; they wrap on smaller ones)
FRAME = 285
#: orbit lines: the run without reaction force wide and light under the others, so every run shows
#: where they coincide
ORBIT_STYLES = {model: dict(color=MODEL_STYLES[model]["color"], line_width=1.6) for model in DRAW_ORDER}
ORBIT_STYLES["none"] = dict(color=MODEL_STYLES["none"]["color"], line_width=4.0, line_alpha=0.45)


def _empty_orbit():
    return {"x": [], "y": [], "z": []}


def _empty_path():
    return {"h": [], "v": []}


def _empty_image():
    return {"image": [], "x": [], "y": [], "dw": [], "dh": []}


def _rgba(counts, color, alpha_floor=0.35):
    """Visit counts -> RGBA uint32 image in ``color``; empty cells transparent, busier cells more opaque."""
    r, g, b = (int(color[i:i + 2], 16) for i in (1, 3, 5))
    top = float(counts.max()) if counts.size else 0.0
    alpha = np.zeros(counts.shape)
    if top > 0:
        alpha = np.where(counts > 0, alpha_floor + (1 - alpha_floor) * np.log1p(counts) / np.log1p(top), 0.0)
    a = np.round(255 * alpha).astype(np.uint32)
    return (a << 24) | (b << 16) | (g << 8) | r


def prepare_orbits(comparison):
    """Orbits thinned per projection with their shape kept, plus their extent (runs on the worker).

    Parameters
    ----------
    comparison : tracker.Comparison

    Returns
    -------
    dict
        ``paths`` {model: {projection: {h, v}}} in m, thinned with ``path_indices`` (a path
        too dense for a line is empty there and drawn from ``images`` {model: {projection:
        RGBA (cells, cells)}} instead); ``notes`` {projection: text saying how it was
        thinned, '' when every state is drawn}; ``start`` and ``ends`` (m); ``lo``/``hi``
        (3,) m; ``box`` = (centre (3,) m, half-width m) or None; ``plane`` with the two
        widest spans; ``equal`` whether equal axis scales suit this orbit; ``reference`` the
        model whose orbit the field preview draws.
    """
    results = runs_of(comparison)
    reference = reference_model(comparison)
    points = [r.x for r in results.values() if len(r.x)]
    empty_paths = {name: {title: _empty_path() for title, _a, _b in PROJECTIONS} for name in results}
    if not points:
        return {"paths": empty_paths, "images": {}, "notes": {}, "start": None, "ends": {}, "lo": None,
                "hi": None, "box": None, "plane": "x-y", "equal": True, "reference": reference}
    allx = np.concatenate(points)
    finite = np.all(np.isfinite(allx), axis=1)
    lo, hi = allx[finite].min(axis=0), allx[finite].max(axis=0)
    paths, images, ends, notes = empty_paths, {name: {} for name in results}, {}, {}
    for title, a, b in PROJECTIONS:
        ia, ib = AXES.index(a), AXES.index(b)
        window = ((lo[ia], lo[ib]), (hi[ia], hi[ib]))
        drawn, total, dense = 0, 0, False
        for name, r in results.items():
            if not len(r.x):
                continue
            h, v = r.x[:, ia], r.x[:, ib]
            idx = path_indices(h, v, *window)
            total += len(h)
            if len(idx) <= MAX_ORBIT_POINTS:
                paths[name][title] = {"h": h[idx], "v": v[idx]}
                drawn += len(idx)
            else:
                dense = True
                counts = density_image(h, v, *window)
                images[name][title] = {"rgba": _rgba(counts, MODEL_STYLES[name]["color"]), "lo": window[0],
                                       "hi": window[1]}
        if dense:
            notes[title] = (f"{title}: the path is too dense for a line, drawn as the cells it visits "
                            f"({DENSITY_CELLS}×{DENSITY_CELLS}, darker = more often)")
        elif drawn < total:
            notes[title] = (f"{title}: {drawn:,} of {total:,} saved states drawn; the others lie within "
                            f"1/{PATH_CELLS} of the window from the line")
    for name, r in results.items():
        if len(r.x):
            ends[name] = r.x[-1].copy()
    first = results.get(reference)
    start = first.x[0].copy() if first is not None and len(first.x) else None
    spread = hi - lo
    half = 0.5 * float(np.max(spread)) * FIT_MARGIN
    widest = sorted(np.argsort(spread, kind="stable")[-2:])
    ordered = np.sort(spread)
    return {"paths": paths, "images": images, "notes": notes, "start": start, "ends": ends, "lo": lo, "hi": hi,
            "box": (0.5 * (lo + hi), half) if half > 0 else None,
            "plane": f"{AXES[widest[0]]}-{AXES[widest[1]]}",
            "equal": bool(ordered[1] > 0 and ordered[2] <= EQUAL_SCALE_RATIO * ordered[1]), "reference": reference}


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
        self.paths = {(name, title): ColumnDataSource(_empty_path()) for name in DRAW_ORDER
                      for title, _a, _b in PROJECTIONS}
        self.images = {(name, title): ColumnDataSource(_empty_image()) for name in DRAW_ORDER
                       for title, _a, _b in PROJECTIONS}
        self.ends = {name: ColumnDataSource(_empty_orbit()) for name in DRAW_ORDER}
        self.start = ColumnDataSource(_empty_orbit())
        self.figures = []
        for title, a, b in PROJECTIONS:
            # square frames and equal spans: equal pixels per metre on both axes
            # a short title: with the toolbar beside it, a longer one widened the frame (unequal scales)
            fig = new_figure(f"{title} projection", f"{a} (m)", f"{b} (m)", height=FRAME,
                             frame_width=FRAME, x_range=self.ranges[a], y_range=self.ranges[b])
            # no reaction force first and wider, the damped models on top: where they coincide all stay visible
            for name in DRAW_ORDER:
                fig.image_rgba(image="image", x="x", y="y", dw="dw", dh="dh", source=self.images[(name, title)])
            for name in DRAW_ORDER:
                fig.line("h", "v", source=self.paths[(name, title)], legend_label=MODEL_LABELS[name],
                         **ORBIT_STYLES[name])
                fig.scatter(a, b, source=self.ends[name], size=7, marker="square",
                            color=MODEL_STYLES[name]["color"], legend_label=MODEL_LABELS[name])
            fig.scatter(a, b, source=self.start, size=9, marker="circle", fill_color="white",
                        line_color=START_COLOR, line_width=2)
            # a legend under the plot wider than the frame would widen the frame (unequal scales):
            # one entry per line; start and end markers are explained above the plots
            style_legend(fig)
            fig.legend[0].orientation = "vertical"
            fig.legend[0].spacing = 2
            fig.sizing_mode = "fixed"
            self.figures.append(fig)
        self.equal = checkbox("same scale on all axes", value=True, margin=(6, 8),
                                         css_classes=["orbit-equal"])
        self.equal.param.watch(self._show, "value")
        self.notes = html_pane("", sizing_mode="stretch_width", margin=(0, 8), css_classes=["orbit-notes"])
        self._layout = pn.Column(
            pn.Row(self.equal, html_pane('<span class="ro-note">squares: end points · circle: start · '
                                         "a click on a legend entry hides that curve</span>", margin=(10, 8)),
                   margin=0),
            self.notes,
            # a wrapping row of fixed-size plots: a stretching row would widen the square frames
            pn.Row(*[pn.pane.Bokeh(f, sizing_mode="fixed", styles={"flex": "none"}) for f in self.figures], styles={"flex-wrap": "wrap"},
                   sizing_mode="stretch_width", margin=0),
            sizing_mode="stretch_width", margin=0)
        state.param.watch(self._new_result, "prepared")
        self._new_result()

    def __panel__(self):
        return self._layout

    def _new_result(self, *_):
        prepared = self.state.prepared
        if not prepared:
            self._clear()
            return
        suggested = prepared["orbits"]["equal"]
        if self.equal.value != suggested:
            self.equal.value = suggested  # triggers _show
        else:
            self._show()

    def _clear(self):
        """No results (another scenario was opened): empty plots, not the old orbit."""
        self.notes.object = ""

        def change():
            for source in self.paths.values():
                source.data = _empty_path()
            for source in self.images.values():
                source.data = _empty_image()
            for source in (*self.ends.values(), self.start):
                source.data = _empty_orbit()
            show_legend_items(self.figures, {})

        apply_to_models(change)

    def _show(self, *_):
        prepared = self.state.prepared
        if not prepared or prepared["orbits"]["lo"] is None:
            return
        data = prepared["orbits"]
        frames = axis_frames(data["lo"], data["hi"], self.equal.value)
        scale = {axis: frames[axis][1] for axis in AXES}

        def scaled(point):
            return {axis: [point[i] / scale[axis]] for i, axis in enumerate(AXES)}

        paths, images = {}, {}
        for title, a, b in PROJECTIONS:
            for name in DRAW_ORDER:
                run = data["paths"].get(name, {}).get(title, _empty_path())
                paths[(name, title)] = {"h": np.asarray(run["h"]) / scale[a], "v": np.asarray(run["v"]) / scale[b]}
                image = data["images"].get(name, {}).get(title)
                if image is None:
                    images[(name, title)] = _empty_image()
                else:
                    (h0, v0), (h1, v1) = image["lo"], image["hi"]
                    images[(name, title)] = {"image": [image["rgba"]], "x": [h0 / scale[a]], "y": [v0 / scale[b]],
                                             "dw": [(h1 - h0) / scale[a]], "dh": [(v1 - v0) / scale[b]]}
        notes = [text for text in data["notes"].values() if text]
        self.notes.object = ('<div class="ro-note" id="orbit-thinning">' + "<br>".join(notes) + "</div>"
                             if notes else "")

        def change():
            for key, source in self.paths.items():
                source.data = paths[key]
            for key, source in self.images.items():
                source.data = images[key]
            show_legend_items(self.figures, data["paths"])
            for name in DRAW_ORDER:
                end = data["ends"].get(name)
                self.ends[name].data = scaled(end) if end is not None else _empty_orbit()
            self.start.data = scaled(data["start"]) if data["start"] is not None else _empty_orbit()
            for axis, (_label, _scale, start, end) in frames.items():
                self.ranges[axis].update(start=start, end=end, reset_start=start, reset_end=end)
            for fig, (_title, a, b) in zip(self.figures, PROJECTIONS):
                fig.xaxis.axis_label = f"{a} ({frames[a][0]})"
                fig.yaxis.axis_label = f"{b} ({frames[b][0]})"

        apply_to_models(change)
