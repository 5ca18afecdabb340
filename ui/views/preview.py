"""Field preview: |E|, |B| and one chosen component on a plane, from ``Scenario.fields_at``.

The user picks the plane (x-y, x-z, y-z), its centre, half-width and the time. Until
the first run the window is centred on the particle start and as wide as light
travels in half the run; after a run it fits the orbit (until the user sets it).
"""

import html

import numpy as np
import panel as pn
from bokeh.models import (BasicTickFormatter, ColorBar, ColumnDataSource, LinearColorMapper, LogColorMapper,
                          LogTickFormatter, Range1d)
from panel.viewable import Viewer

from tracker import ScenarioError, constants
from tracker.units import parse_scalar, parse_vector

from ..entries import entry_to_raw
from ..format import LENGTH_UNITS, TIME_UNITS, pick_unit, quantity_text
from .document import apply_to_models
from .palette import B_PALETTE, COMPONENT_PALETTE, E_PALETTE, MODEL_LABELS, START_COLOR, new_figure
from ..theme import checkbox, html_pane

PLANES = {"x-y": (0, 1), "x-z": (0, 2), "y-z": (1, 2)}
AXES = "xyz"
COMPONENTS = ("Ex", "Ey", "Ez", "Bx", "By", "Bz")
#: grid points per side (121^2 evaluations take a few ms)
GRID = 121
#: lowest shown magnitude on the log colour scale, relative to the largest (display only)
LOG_DYNAMIC_RANGE = 1e-6
NAN_COLOR = "#d5d9de"


def field_slice(scenario, plane, centre, half_width, t, n=GRID):
    """E and B on an n x n grid in a plane through ``centre``.

    Parameters
    ----------
    scenario : tracker.Scenario
    plane : {'x-y', 'x-z', 'y-z'}
    centre : sequence of 3 float, m
    half_width : float, m
    t : float, s
    n : int

    Returns
    -------
    dict
        ``h``, ``v``: grid coordinates along the horizontal and vertical axis (m, shape (n,));
        ``E`` (V/m) and ``B`` (T), shape (n, n, 3), row index along ``v``.
    """
    a, b = PLANES[plane]
    offsets = np.linspace(-half_width, half_width, n)
    across, up = np.meshgrid(offsets, offsets)
    points = np.empty((n * n, 3))
    points[:] = np.asarray(centre, dtype=float)
    points[:, a] += across.ravel()
    points[:, b] += up.ravel()
    e, b_field = scenario.fields_at(points, t)
    return {"h": centre[a] + offsets, "v": centre[b] + offsets,
            "E": np.asarray(e).reshape(n, n, 3), "B": np.asarray(b_field).reshape(n, n, 3)}


def slice_images(grid, component):
    """(|E|, |B|, chosen component) images, non-finite values as NaN."""
    def clean(a):
        return np.where(np.isfinite(a), a, np.nan)

    e, b = clean(grid["E"]), clean(grid["B"])
    which = COMPONENTS.index(component)
    comp = (e if which < 3 else b)[:, :, which % 3]
    return np.sqrt(np.sum(e * e, axis=-1)), np.sqrt(np.sum(b * b, axis=-1)), comp


def tick_formatter(kind):
    """Colour-bar labels: powers of ten on a log scale, short scientific numbers otherwise."""
    if kind == "log":
        return LogTickFormatter()
    return BasicTickFormatter(precision=1, power_limit_high=4, power_limit_low=-2)


def plane_along(u):
    """The plane holding the two largest components of ``u`` (ties go to x, then y)."""
    order = sorted(range(3), key=lambda i: (-abs(float(u[i])), i))
    first, second = sorted(order[:2])
    return f"{AXES[first]}-{AXES[second]}"


def magnitude_limits(image, log):
    """(low, high) colour limits of a magnitude image; None when it is zero everywhere."""
    finite = image[np.isfinite(image)]
    high = float(finite.max()) if finite.size else 0.0
    if high <= 0:
        return None
    if not log:
        return 0.0, high
    positive = finite[finite > 0]
    return max(float(positive.min()), high * LOG_DYNAMIC_RANGE), high


class FieldPreview(Viewer):
    """Three maps (|E|, |B|, a component) of the scenario's fields on a chosen plane."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self.auto_window = True
        self.auto_plane = True
        self.auto_component = True
        self._syncing = False
        self.plane = pn.widgets.Select(options=list(PLANES), value="x-y", width=80, margin=(4, 4),
                                       css_classes=["preview-plane"])
        self.component = pn.widgets.Select(options=list(COMPONENTS), value="Bz", width=70, margin=(4, 4),
                                           css_classes=["preview-component"])
        self.log_scale = checkbox("log colour for |E|, |B|", value=True, margin=(10, 8))
        self.centre = [pn.widgets.TextInput(width=92, margin=(4, 2), placeholder=a,
                                            css_classes=[f"preview-centre-{i}"]) for i, a in enumerate(AXES)]
        self.half_width = pn.widgets.TextInput(width=110, margin=(4, 4), css_classes=["preview-half-width"])
        self.time = pn.widgets.FloatSlider(label="time t (s)", start=0.0, end=1.0, value=0.0, step=0.01,
                                           width=300, margin=(4, 8), css_classes=["preview-time"])
        self.fit = pn.widgets.Button(label="Fit to orbit", width=100, margin=(4, 4), disabled=True)
        self.to_start = pn.widgets.Button(label="Centre on start", width=120, margin=(4, 4))
        self.message = html_pane("", sizing_mode="stretch_width", margin=(0, 8))
        self._time_scale = 1.0
        self._reset_time = True  # a newly loaded scenario starts at the middle of its run

        self.x_range, self.y_range = Range1d(-1, 1), Range1d(-1, 1)
        self.images, self.mappers, self.colorbars, self.figures, self.renderers = {}, {}, {}, {}, {}
        self.start = ColumnDataSource({"h": [], "v": []})
        self.orbit = ColumnDataSource({"h": [], "v": []})
        for key, title, palette in (("E", "|E| (V/m)", E_PALETTE), ("B", "|B| (T)", B_PALETTE),
                                    ("C", "Bz (T)", COMPONENT_PALETTE)):
            fig = new_figure(title, "x (m)", "y (m)", height=330, x_range=self.x_range, y_range=self.y_range)
            fig.grid.visible = False
            # three plots share a row on a laptop screen: few ticks keep their labels apart
            fig.xaxis.ticker.desired_num_ticks = 4
            fig.yaxis.ticker.desired_num_ticks = 5
            source = ColumnDataSource({"image": [], "x": [], "y": [], "dw": [], "dh": []})
            linear = LinearColorMapper(palette=palette, nan_color=NAN_COLOR)
            mappers = {"linear": linear}
            if key != "C":
                mappers["log"] = LogColorMapper(palette=palette, nan_color=NAN_COLOR)
            renderer = fig.image(image="image", x="x", y="y", dw="dw", dh="dh", source=source,
                                 color_mapper=mappers["log"] if key != "C" else linear)
            bar = ColorBar(color_mapper=renderer.glyph.color_mapper, width=10, label_standoff=6,
                           major_label_text_font_size="10px",
                           formatter=tick_formatter("log" if key != "C" else "linear"))
            fig.add_layout(bar, "right")
            fig.line("h", "v", source=self.orbit, color="white", line_width=1.4, alpha=0.9)
            fig.line("h", "v", source=self.orbit, color=START_COLOR, line_width=0.8)
            fig.scatter("h", "v", source=self.start, size=10, marker="circle", fill_color="white",
                        line_color=START_COLOR, line_width=2)
            self.images[key], self.mappers[key], self.colorbars[key] = source, mappers, bar
            self.figures[key], self.renderers[key] = fig, renderer

        self.plane.param.watch(self._plane_chosen, "value")
        self.component.param.watch(self._component_chosen, "value")
        self.log_scale.param.watch(self._redraw, "value")
        self.time.param.watch(self._redraw, "value_throttled")
        for widget in (*self.centre, self.half_width):
            widget.param.watch(self._window_typed, "value")
        self.fit.on_click(self._fit_clicked)
        self.to_start.on_click(self._start_clicked)
        state.param.watch(self._scenario_changed, "scenario")
        state.param.watch(self._new_source, "loads")
        state.param.watch(self._results_changed, "prepared")

        controls = pn.Column(
            pn.Row(_label("plane"), self.plane, _label("component"), self.component, self.log_scale, margin=0),
            pn.Row(_label("centre"), *self.centre, _label("half-width"), self.half_width,
                   html_pane('<span class="ro-unit">m, or with units</span>', margin=(10, 4)), margin=0),
            pn.Row(self.time, self.to_start, self.fit, margin=0),
            margin=0,
        )
        self._layout = pn.Column(
            controls,
            pn.Row(*[pn.pane.Bokeh(self.figures[k], sizing_mode="stretch_width") for k in "EBC"],
                   sizing_mode="stretch_width"),
            self.message,
            sizing_mode="stretch_width", margin=0,
        )
        self._scenario_changed()

    def __panel__(self):
        return self._layout

    # ------------------------------------------------------------------ window
    def _set_window(self, centre, half_width):
        """Fill the window boxes, in the unit that suits the half-width (e.g. '-17.99 µm')."""
        unit, scale = pick_unit(half_width, LENGTH_UNITS)
        self._syncing = True
        try:
            for box, value in zip(self.centre, centre):
                box.value = f"{float(value) / scale:.5g} {unit}"
            self.half_width.value = f"{float(half_width) / scale:.5g} {unit}"
        finally:
            self._syncing = False

    def _auto_window(self):
        scenario = self.state.scenario
        prepared = self.state.prepared
        if prepared and prepared["orbits"]["box"] is not None:
            centre, half = prepared["orbits"]["box"]
            self._set_window(centre, half)
            self._set_plane(prepared["orbits"]["plane"])
        elif scenario is not None:
            # light travel over half the run: a scale every scenario has (display only)
            self._set_window(scenario.particle.position, 0.5 * constants.c * scenario.run.duration)
            self._set_plane(plane_along(scenario.particle.u))

    def _set_plane(self, plane):
        if not self.auto_plane or plane == self.plane.value:
            return
        self._syncing = True
        try:
            self.plane.value = plane
        finally:
            self._syncing = False

    def _component_chosen(self, *_):
        if not self._syncing:
            self.auto_component = False
            self._redraw()

    def _pick_component(self, grid):
        """While the user has not chosen: the component largest in the window."""
        if not self.auto_component:
            return
        both = np.concatenate([grid["E"], grid["B"]], axis=-1).reshape(-1, 6)
        # compare E and B in the same units: |E|/c against |B| (display only)
        weights = np.array([1 / constants.c] * 3 + [1.0] * 3)
        sizes = np.nanmax(np.where(np.isfinite(both), np.abs(both), np.nan), axis=0) * weights
        if not np.any(sizes > 0):
            return
        best = COMPONENTS[int(np.nanargmax(sizes))]
        if best != self.component.value:
            self._syncing = True
            try:
                self.component.value = best
            finally:
                self._syncing = False

    def _plane_chosen(self, *_):
        if not self._syncing:
            self.auto_plane = False
            self._redraw()

    def _window(self):
        """(centre (3,) m, half-width m) from the boxes; raises ScenarioError naming the box."""
        centre = parse_vector([entry_to_raw(b.value) for b in self.centre], "length", "preview.centre")
        half = parse_scalar(entry_to_raw(self.half_width.value), "length", "preview.half_width")
        if not half > 0:
            raise ScenarioError("preview.half_width", f"must be positive, not {self.half_width.value!r}.")
        return np.array(centre), half

    def _window_typed(self, *_):
        if self._syncing:
            return
        self.auto_window = False
        self._redraw()

    def _fit_clicked(self, *_):
        self.auto_window = True
        self._auto_window()
        self._redraw()

    def _start_clicked(self, *_):
        scenario = self.state.scenario
        if scenario is None:
            return
        try:
            _, half = self._window()
        except ScenarioError:
            half = 0.5 * constants.c * scenario.run.duration
        self.auto_window = False
        self._set_window(scenario.particle.position, half)
        self._redraw()

    # ------------------------------------------------------------------ state events
    def _new_source(self, *_):
        self.auto_window = self.auto_plane = self.auto_component = True
        self._reset_time = True
        self._scenario_changed()

    def _scenario_changed(self, *_):
        scenario = self.state.scenario
        if scenario is not None:
            duration = scenario.run.duration
            unit, scale = pick_unit(duration, TIME_UNITS)
            fraction = (self.time.value / self.time.end) if self.time.end else 0.5
            if self._reset_time:
                fraction, self._reset_time = 0.5, False
            self._time_scale = scale
            end = duration / scale
            self.time.param.update(start=0.0, end=end, step=end / 400, value=min(end, fraction * end),
                                   label=f"time t ({unit})")
            if self.auto_window:
                self._auto_window()
        self._redraw()

    def _results_changed(self, *_):
        self.fit.disabled = not (self.state.prepared and self.state.prepared["orbits"]["box"] is not None)
        if self.auto_window:
            self._auto_window()
        self._redraw()

    # ------------------------------------------------------------------ drawing
    def _redraw(self, *_):
        scenario = self.state.scenario
        if scenario is None:
            self.message.object = ('<div class="ro-note" id="preview-message" data-valid="false">No preview: the '
                                   "scenario is not valid (see the messages beside the inputs).</div>")

            def blank():
                # never show the field of an earlier, valid draft as if it were this one
                for key, fig in self.figures.items():
                    self.images[key].data = {"image": [], "x": [], "y": [], "dw": [], "dh": []}
                    fig.title.text = "no valid scenario"
                self.orbit.data = {"h": [], "v": []}
                self.start.data = {"h": [], "v": []}

            apply_to_models(blank)
            return
        try:
            centre, half = self._window()
        except ScenarioError as exc:
            self.message.object = (f'<div class="ro-error" id="preview-message" style="color:#b3261e">'
                                   f"{html.escape(str(exc))}</div>")
            return
        t = self.time.value * self._time_scale
        plane = self.plane.value
        grid = field_slice(scenario, plane, centre, half, t)
        self._pick_component(grid)
        a, b = PLANES[plane]
        unit, scale = pick_unit(half, LENGTH_UNITS)
        h, v = grid["h"] / scale, grid["v"] / scale
        step_h, step_v = h[1] - h[0], v[1] - v[0]
        images = dict(zip("EBC", slice_images(grid, self.component.value)))
        log = self.log_scale.value
        notes, updates = [], {}
        for key, image in images.items():
            if key == "C":
                finite = image[np.isfinite(image)]
                top = float(np.max(np.abs(finite))) if finite.size else 0.0
                unit_c = "V/m" if self.component.value.startswith("E") else "T"
                updates[key] = ("linear", -(top or 1.0), top or 1.0, f"{self.component.value} ({unit_c})", image)
                continue
            limits = magnitude_limits(image, log)
            low, high = limits or (0.0, 1.0)
            label = "|E| (V/m)" if key == "E" else "|B| (T)"
            if limits is None:
                notes.append(f"{'E' if key == 'E' else 'B'} is zero everywhere in this window")
                shown = np.full_like(image, np.nan)  # grey, not the palette's dark end
            else:
                shown = np.where(image > 0, image, low) if log else image
            updates[key] = ("log" if log and limits else "linear", low, high,
                            label if limits else f"{label}: zero in this window", shown)
        start = np.asarray(scenario.particle.position)
        orbit = self._orbit_projection(a, b, scale)

        def change():
            for key, (kind, low, high, title, shown) in updates.items():
                fig, renderer = self.figures[key], self.renderers[key]
                mapper = self.mappers[key][kind]
                mapper.update(low=low, high=high)
                if renderer.glyph.color_mapper is not mapper:
                    renderer.glyph.color_mapper = mapper
                    self.colorbars[key].color_mapper = mapper
                    self.colorbars[key].formatter = tick_formatter(kind)
                fig.title.text = title
                self.images[key].data = {"image": [shown], "x": [h[0] - step_h / 2], "y": [v[0] - step_v / 2],
                                         "dw": [h[-1] - h[0] + step_h], "dh": [v[-1] - v[0] + step_v]}
                fig.xaxis.axis_label = f"{AXES[a]} ({unit})"
                fig.yaxis.axis_label = f"{AXES[b]} ({unit})"
            self.x_range.update(start=h[0] - step_h / 2, end=h[-1] + step_h / 2)
            self.y_range.update(start=v[0] - step_v / 2, end=v[-1] + step_v / 2)
            self.start.data = {"h": [start[a] / scale], "v": [start[b] / scale]}
            self.orbit.data = orbit

        apply_to_models(change)
        where = ", ".join(f"{c / scale:.4g}" for c in centre)
        self.message.object = (
            f'<div class="ro-note" id="preview-message" data-valid="true">{plane} plane through ({where}) {unit}, '
            f"t = {quantity_text(t, TIME_UNITS, 4)}, {GRID}×{GRID} points from Scenario.fields_at; "
            "white dot: particle start"
            + (f"; line: last orbit ({self._orbit_model()})" if len(orbit["h"]) else "")
            + (f"; {'; '.join(notes)}" if notes else "") + ".</div>")

    def _orbit_model(self):
        reference = (self.state.prepared or {}).get("orbits", {}).get("reference")
        return MODEL_LABELS.get(reference, "")

    def _orbit_projection(self, a, b, scale):
        prepared = self.state.prepared
        if not prepared or prepared["orbits"].get("reference") is None:
            return {"h": [], "v": []}
        paths = prepared["orbits"]["paths"].get(prepared["orbits"]["reference"], {})
        path = paths.get(f"{AXES[a]}-{AXES[b]}", {"h": [], "v": []})
        return {"h": np.asarray(path["h"]) / scale, "v": np.asarray(path["v"]) / scale}


def _label(text):
    return html_pane(f'<span class="ro-label">{html.escape(text)}</span>', margin=(10, 2, 0, 8))
