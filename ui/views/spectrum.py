"""Spectrum tab: what a detector would see from the orbit of every model run.

A view only: every number comes from ``tracker.radiation`` (``spectra`` is also what
``radorbit spectrum`` calls); this module picks display units and draws. It reads the
session's ``LabState`` like every other view, and its computation is a queued
``ui.work.Job`` handed back through the session's ``SessionLink`` (cancelled with it).

- Spectrum (on demand, "Compute spectrum" button, off the UI thread): the method
  chosen by the orbit (``tracker.radiation.choice``, its reason shown), the
  synchrotron spectrum summed over all directions, dW/domega (refused for
  orbits that are not synchrotron-like), or the radiation integral towards a
  direction (the mean velocity unless one is typed), d^2W/(domega dOmega); an
  optional photon-energy range; log axes over photon energy in eV, keV or MeV.
- Angular map (cheap, redrawn when the time slider is released): dP/dOmega of
  one saved state per unit emission time, every model run side by side on
  one colour scale, with theta measured from the velocity (in units of 1/gamma)
  or from lab +z.
"""

import numpy as np
import panel as pn
from bokeh.models import ColorBar, ColumnDataSource, LinearColorMapper
from bokeh.plotting import figure
from panel.viewable import Viewer

from tracker import ScenarioError
from tracker import radiation

from ..session import SessionLink
from ..work import Job
from .palette import DRAW_ORDER, MODEL_LABELS, MODEL_STYLES, show_legend_items, style_legend
from .runs import reference_run, runs_of

METHODS = {
    "Automatic: chosen by the orbit": "auto",
    "Synchrotron spectrum, all directions": "synchrotron",
    "Radiation integral, towards one direction": "nufft",
}
FRAMES = {"θ from the velocity (units of 1/γ)": "velocity", "θ from lab +z (degrees)": "z"}
PHOTON_UNITS = (("MeV", 1e6), ("keV", 1e3), ("eV", 1.0))
#: frequencies per spectrum; the radiation integral keeps undulator lines of width 1/(nN) visible
SPECTRUM_POINTS = {"synchrotron": 400, "nufft": 2000}
#: points of a grid typed as a photon-energy range
RANGE_POINTS = 800
#: angular map: polar x azimuthal samples, and the polar extent in units of 1/gamma
MAP_SHAPE = (64, 73)
VELOCITY_FRAME_EXTENT = 5.0
TOOLS = "pan,box_zoom,wheel_zoom,reset,save"


def photon_unit(max_ev):
    """(label, eV per unit) for photon energies up to ``max_ev`` (eV)."""
    for label, scale in PHOTON_UNITS:
        if max_ev >= scale:
            return label, scale
    return PHOTON_UNITS[-1]


def parse_range(low, high):
    """Photon-energy range typed in the tab -> (low, high) in rad/s, or None when both are empty.

    Each box takes a photon energy ("1 keV"), a frequency ("300 THz") or an angular
    frequency (rad/s); raises ScenarioError naming the box.
    """
    from tracker.radiation.cli import parse_angular_frequency

    low, high = (str(low or "").strip(), str(high or "").strip())
    if not low and not high:
        return None
    if not (low and high):
        raise ScenarioError("photon range", "give both ends of the range, or neither.")
    w_low = parse_angular_frequency(low, "photon range (from)")
    w_high = parse_angular_frequency(high, "photon range (to)")
    if not (0 < w_low < w_high < float("inf")):
        raise ScenarioError("photon range", f"needs 0 < from < to, not {low!r} .. {high!r}.")
    return w_low, w_high


def parse_lab_direction(text):
    """Direction typed in the tab ('nx, ny, nz') -> unit vector (3,), or None when empty."""
    from tracker.radiation.cli import parse_direction

    text = str(text or "").strip()
    return parse_direction(text, "direction") if text else None


def compute_spectra(comparison, method, omega_range=None, direction=None):
    """Spectra of every model run for display (the method and default grid follow the reference run).

    Parameters
    ----------
    comparison : tracker.Comparison
    method : {"auto", "synchrotron", "nufft"}
    omega_range : (low, high) rad/s, optional
        Log-spaced grid over this range instead of the default one.
    direction : ndarray (3,), optional
        Observer direction of the radiation integral (default: the mean velocity).

    Returns
    -------
    dict
        ``runs``: {model: (photon energy eV (n,), value (n,))}, ``ylabel``, ``note`` (text),
        ``method`` (the one used).
    """
    from tracker.radiation.beam_spectrum import is_beam, require_particles
    from tracker.radiation.choice import check_synchrotron, choose_method, clip_to_ceiling, quantum_note
    from tracker.radiation.synchrotron import largest_critical_frequency

    runs = {}
    notes = []
    reference = reference_run(comparison)
    beam = is_beam(reference)
    if beam:
        require_particles(reference)   # a statistics-only beam: refused with the reason
        notes.append(f"the incoherent sum over the beam's {reference.count:,} particles (intensities add); the "
                     "method is chosen by particle 0's orbit")
    probe = reference.particle(0) if beam else reference   # the method choice looks at one orbit
    if method == "auto":
        method, reason = choose_method(probe, None if direction is None else direction[None, :])
        notes.append(f"method chosen: {reason}")
        if method == "synchrotron" and direction is not None:
            notes.append("the direction does not apply (summed over all directions)")
    elif method == "synchrotron":
        check_synchrotron(probe)
    if omega_range is not None:
        omega = np.geomspace(omega_range[0], omega_range[1], RANGE_POINTS)
    elif method == "synchrotron":
        omega = radiation.default_synchrotron_omega(reference, SPECTRUM_POINTS[method])
    else:
        direction = radiation.default_direction(reference) if direction is None else direction
        omega = radiation.default_omega(reference, direction[None, :], SPECTRUM_POINTS[method])
    omega, cut = clip_to_ceiling(probe, omega)
    notes += [n for n in (cut, quantum_note(probe)) if n]
    results = {name: result for name, result in runs_of(comparison).items() if result is reference}
    results.update(runs_of(comparison))  # the reference run first: the spectra share its grid
    if method == "synchrotron":
        found = radiation.spectra(results, method, omega)  # the function `radorbit spectrum` calls
        runs = {name: (found.photon_energy_ev, values) for name, values in found.values.items()}
        ylabel = "dW/dω (J s), all directions"
        wc = largest_critical_frequency(reference)
        notes.append(f"largest critical photon energy {float(radiation.photon_energy_ev(wc)):.4g} eV")
    else:
        direction = radiation.default_direction(reference) if direction is None else direction
        found = radiation.spectra(results, method, omega, direction[None, :])
        runs = {name: (found.photon_energy_ev, values[0]) for name, values in found.values.items()}
        ylabel = "d²W/dω dΩ (J s/sr)"
        notes.append("towards n = (" + ", ".join(f"{v:+.4f}" for v in direction) + ")")
        if omega_range is None:
            notes.append(f"up to {float(radiation.photon_energy_ev(omega[-1])):.4g} eV, half the highest frequency "
                         "the saved states resolve")
    return {"runs": runs, "ylabel": ylabel, "note": "; ".join(notes), "method": method}


def map_orbit(result):
    """The orbit an angular map is drawn for: the run itself, or particle 0 of a beam.

    Raises ScenarioError('result') for a beam saved as statistics only (no orbits).
    """
    from tracker.radiation.beam_spectrum import is_beam, require_particles

    if not is_beam(result):
        return result
    require_particles(result)
    return result.particle(0)


def compute_maps(comparison, index, frame):
    """dP/dOmega (W/sr) of every model run at the reference run's saved state ``index`` (others: nearest time).

    Returns
    -------
    dict
        ``maps`` {model: (n_theta, n_phi) array}, ``theta_extent`` (display units),
        ``theta_label``, ``time`` (s), ``gamma``.
    """
    reference = map_orbit(reference_run(comparison))
    t = float(reference.t[index])
    gamma = float(reference.gamma[index])
    phi = np.linspace(0.0, 2.0 * np.pi, MAP_SHAPE[1])
    if frame == "velocity":
        extent = VELOCITY_FRAME_EXTENT
        theta = np.linspace(0.0, extent / gamma, MAP_SHAPE[0])
        label = "γθ from the velocity"
    else:
        extent = 180.0
        theta = np.linspace(0.0, np.pi, MAP_SHAPE[0])
        label = "θ from +z (deg)"
    maps = {}
    for name, result in runs_of(comparison).items():
        result = map_orbit(result)
        i = int(np.clip(np.searchsorted(result.t, t), 0, len(result.t) - 1))
        maps[name] = radiation.angular_distribution(result, i, theta, phi, axis=frame)
    return {"maps": maps, "theta_extent": extent, "theta_label": label, "time": t, "gamma": gamma}


class SpectrumPanel(Viewer):
    """Spectrum and angular distribution of every model run of the session's latest comparison.

    Parameters
    ----------
    state : ui.state.LabState, optional
        Followed for new results (without it, feed comparisons with ``update``).
    link : ui.session.SessionLink, optional
        Hands the spectrum job back to the page and cancels it when the tab closes.
    """

    def __init__(self, state=None, link=None, **params):
        super().__init__(**params)
        self.state = state
        self.link = link if link is not None else SessionLink()
        self.link.on_gone(self.cancel)
        self._comparison = None
        self._job = None
        self.method = pn.widgets.Select(label="Spectrum", options=METHODS, value="auto", width=360)
        self.range_low = pn.widgets.TextInput(label="Photon energy from", placeholder="default, or e.g. 10 eV",
                                              width=170)
        self.range_high = pn.widgets.TextInput(label="to", placeholder="default, or e.g. 5 keV", width=170)
        self.direction = pn.widgets.TextInput(label="Direction (radiation integral)",
                                              placeholder="mean velocity, or nx, ny, nz", width=220)
        self.compute_button = pn.widgets.Button(label="Compute spectrum", color="primary", disabled=True,
                                                width=170, align="end")
        self.status = pn.pane.Str("Run a scenario, then compute its spectrum here.",
                                  css_classes=["spectrum-status"], sizing_mode="stretch_width")
        self.time_slider = pn.widgets.IntSlider(label="Saved state for the angular map", start=0, end=1, value=0,
                                                disabled=True, width=360)
        self.frame = pn.widgets.RadioButtonGroup(options=FRAMES, value="velocity", color="light")
        self.map_status = pn.pane.Str("", css_classes=["angular-status"], sizing_mode="stretch_width")

        self.spectrum_sources = {name: ColumnDataSource(dict(x=[], y=[])) for name in DRAW_ORDER}
        self.spectrum_figure = figure(title="Radiated spectrum", x_axis_type="log", y_axis_type="log", height=320,
                                      sizing_mode="stretch_width", tools=TOOLS, toolbar_location="above")
        self.spectrum_figure.xaxis.axis_label = "photon energy (eV)"
        self.spectrum_figure.yaxis.axis_label = "dW/dω (J s)"
        for name in DRAW_ORDER:
            self.spectrum_figure.line("x", "y", source=self.spectrum_sources[name], legend_label=MODEL_LABELS[name],
                                      **MODEL_STYLES[name])
        style_legend(self.spectrum_figure)  # under the plot, clear of the data
        self.spectrum_figure.toolbar.logo = None

        self.color_mapper = LinearColorMapper(palette="Viridis256", low=0.0, high=1.0)
        empty = dict(image=[np.zeros((2, 2))], x=[0.0], y=[0.0], dw=[360.0], dh=[1.0])
        self.map_sources = {name: ColumnDataSource(dict(empty)) for name in DRAW_ORDER}
        self.map_figures = {}
        for name in DRAW_ORDER:
            fig = figure(title=f"dP/dΩ, {MODEL_LABELS[name]}", height=300, width=420, tools=TOOLS,
                         toolbar_location="above", x_range=(0.0, 360.0), y_range=(0.0, 1.0))
            fig.image(image="image", x="x", y="y", dw="dw", dh="dh", source=self.map_sources[name],
                      color_mapper=self.color_mapper)
            fig.xaxis.axis_label = "φ (deg)"
            fig.yaxis.axis_label = "γθ from the velocity"
            fig.toolbar.logo = None
            # one colour scale for every map: each carries its bar, since any of them may be hidden
            fig.add_layout(ColorBar(color_mapper=self.color_mapper, title="W/sr", width=10), "right")
            self.map_figures[name] = fig
        self.map_panes = {name: pn.pane.Bokeh(fig, visible=False) for name, fig in self.map_figures.items()}

        self.compute_button.on_click(self._on_compute)
        self.time_slider.param.watch(self._on_map_change, "value_throttled")
        self.frame.param.watch(self._on_map_change, "value")
        self._layout = pn.Column(
            pn.pane.Markdown("#### Spectrum (computed on demand)"),
            pn.Row(self.method, self.compute_button),
            pn.Row(self.range_low, self.range_high, self.direction),
            self.status,
            pn.pane.Bokeh(self.spectrum_figure, sizing_mode="stretch_width"),
            pn.pane.Markdown("#### Angular distribution of the emitted power, per unit emission time"),
            pn.Row(self.time_slider, self.frame),
            self.map_status,
            pn.Row(*self.map_panes.values(), styles={"flex-wrap": "wrap"}, sizing_mode="stretch_width"),
            sizing_mode="stretch_width",
        )
        self.error = pn.pane.HTML("", visible=False, sizing_mode="stretch_width")
        self._layout.insert(0, self.error)
        if state is not None:
            state.param.watch(self._new_result, "comparison")
            self._new_result()

    def __panel__(self):
        return self._layout

    def _new_result(self, *_):
        comparison = self.state.comparison
        if comparison is None:
            self.clear()
            return
        try:
            self.update(comparison)
            self.error.visible = False
        except Exception as exc:  # shown in its tab, never a traceback
            self.error.object = (f'<div class="ro-error" style="color:#b3261e">The angular map could not be '
                                 f"drawn: {type(exc).__name__}: {exc}</div>")
            self.error.visible = True

    def clear(self):
        """No results (a new scenario was opened): empty plots, nothing to compute."""
        self.cancel()
        self._comparison = None
        for source in self.spectrum_sources.values():
            source.data = dict(x=[], y=[])
        self.compute_button.disabled = True
        self.time_slider.disabled = True
        self.status.object = "Run a scenario, then compute its spectrum here."
        self.map_status.object = ""

    def cancel(self):
        """Stop a spectrum being computed (its outcome is dropped)."""
        if self._job is not None:
            self._job.cancel()
            self._job = None

    # ------------------------------------------------------------------ inputs
    def update(self, comparison):
        """Show a new comparison: reset the spectrum, redraw the angular maps."""
        self.cancel()
        self._comparison = comparison
        for source in self.spectrum_sources.values():
            source.data = dict(x=[], y=[])
        runs = runs_of(comparison)
        show_legend_items([self.spectrum_figure], runs)
        for name, pane in self.map_panes.items():
            pane.visible = name in runs
        try:
            reference = map_orbit(reference_run(comparison))
        except ScenarioError as exc:   # a statistics-only beam: nothing to compute, and why
            self._comparison = None
            self.time_slider.disabled = self.compute_button.disabled = True
            self.status.object = f"No spectrum: {exc}"
            self.map_status.object = ""
            return
        n = len(reference.t)
        peak = int(np.nanargmax(reference.power)) if n and np.any(np.isfinite(reference.power)) else 0
        self.time_slider.param.update(start=0, end=max(1, n - 1), value=peak, disabled=n < 2)
        self.compute_button.disabled = n < 2
        self.status.object = "Ready: press “Compute spectrum”." if n >= 2 else "The run saved too few states."
        self.draw_maps()

    def draw_maps(self):
        """Recompute and draw dP/dOmega for the selected saved state (cheap: one state per run)."""
        if self._comparison is None:
            return
        index = int(np.clip(self.time_slider.value, 0, len(map_orbit(reference_run(self._comparison)).t) - 1))
        try:
            data = compute_maps(self._comparison, index, self.frame.value)
        except ScenarioError as exc:
            self.map_status.object = f"No angular map: {exc}"
            return
        top = max(float(np.max(m)) for m in data["maps"].values())
        self.color_mapper.update(low=0.0, high=top if top > 0 else 1.0)
        extent = data["theta_extent"]
        for name, values in data["maps"].items():
            self.map_sources[name].data = dict(image=[values], x=[0.0], y=[0.0], dw=[360.0], dh=[extent])
            fig = self.map_figures[name]
            fig.y_range.update(start=0.0, end=extent)
            fig.yaxis.axis_label = data["theta_label"]
        from tracker.radiation.beam_spectrum import is_beam

        whose = "particle 0 of the beam; " if is_beam(reference_run(self._comparison)) else ""
        self.map_status.object = (f"{whose}t = {data['time']:.4g} s, γ = {data['gamma']:.6g}; peak dP/dΩ = "
                                  f"{top:.4g} W/sr (per unit emission time)")

    def _on_map_change(self, *_):
        self.draw_maps()

    # ------------------------------------------------------------------ spectrum
    def compute_spectrum(self, wait=False):
        """Compute both spectra as a queued job; ``wait`` blocks until shown (scripts, tests)."""
        if self._comparison is None or self._job is not None:
            return
        comparison = self._comparison
        method = self.method.value
        try:
            omega_range = parse_range(self.range_low.value, self.range_high.value)
            direction = parse_lab_direction(self.direction.value)
        except ScenarioError as exc:
            self.status.object = f"No spectrum: {exc}"
            return
        job = self._job = Job(lambda _progress, _cancel: compute_spectra(comparison, method, omega_range, direction),
                              name="radorbit-lab-spectrum", failure="the spectrum failed").start()
        self.compute_button.disabled = True
        self.status.object = "Computing the spectrum of every run…"

        def finished():
            if self._job is not job:
                return  # cancelled, or replaced by a newer result
            self._job = None
            self._show_spectrum({"error": job.error} if job.error else job.outcome)

        if wait:
            job.wait()
            finished()
        else:
            self.link.watch(lambda: job.done, finished)

    def _on_compute(self, *_):
        self.compute_spectrum()

    def _show_spectrum(self, payload):
        self.compute_button.disabled = self._comparison is None
        if "error" in payload:
            self.status.object = f"No spectrum: {payload['error']}"
            return
        top = max(float(np.max(ev)) for ev, _ in payload["runs"].values())
        label, scale = photon_unit(top)
        for name, (ev, values) in payload["runs"].items():
            shown = np.where(values > 0, values, np.nan)   # log axis
            self.spectrum_sources[name].data = dict(x=ev / scale, y=shown)
        self.spectrum_figure.xaxis.axis_label = f"photon energy ({label})"
        self.spectrum_figure.yaxis.axis_label = payload["ylabel"]
        self.status.object = f"Spectrum of every run; {payload['note']}."
