"""Photons view: the photons a stochastic-emission run recorded, against the classical expectation.

Display only: the histograms are ``tracker.radiation.photons`` (``energy_spectrum``,
``angular_distribution``, ``classical_spectrum``, ``emitted_energy``); this module picks
display units, prepares them on the run's worker thread and draws them:

- photon energy spectra dN/dε and dE/dε, each bin with its Poisson standard error, and on
  the same axes the classical synchrotron-function spectrum of the same orbit;
- the angular distribution dN/dΩ against the polar angle from the photons' mean direction;
- the energy each model radiated (and, for stochastic emission, the recorded photons' energy).
"""

import html

import numpy as np
import panel as pn
from bokeh.models import ColumnDataSource
from panel.viewable import Viewer

from tracker import ScenarioError, constants
from tracker.radiation import photons as photon_analysis

from ..format import ENERGY_UNITS, energy_text, pick_unit
from ..theme import html_pane
from .document import apply_to_models
from .palette import (DRAW_ORDER, MODEL_LABELS, MODEL_STYLES, legend_text, new_figure, show_legend_items,
                      style_legend)
from .runs import runs_of

#: energy bins of the spectra (log-spaced over the recorded photons of every run)
ENERGY_BINS = 48
#: polar-angle bins of the angular distribution
ANGLE_BINS = 48
#: where an error bar that reaches zero stops on the log axes, as a fraction of the value (display only)
BAR_FLOOR = 0.1
ANGLE_UNITS = (("rad", 1.0), ("mrad", 1e-3), ("µrad", 1e-6), ("nrad", 1e-9))
#: colour of the classical expectation (not a model run: it is computed from one run's orbit)
CLASSICAL_STYLE = dict(color="#3e4c59", line_width=1.6, line_dash="dotdash")
CLASSICAL_LABEL = "classical synchrotron function, same orbit"
NO_PHOTONS = ('Tick "stochastic emission" in the Run card and run: that model emits photons one by one '
              "and records them; their spectra and directions are shown here.")


def _points(centers, density, error, scale_x, scale_y):
    """Plot columns of a histogram on log axes: empty bins left out, error bars kept above zero."""
    keep = density > 0
    y = density[keep] / scale_y
    e = error[keep] / scale_y
    # a bar reaching zero cannot be drawn on a log axis (nor one reaching round-off above it): a bar
    # going below a tenth of the value stops there
    low = np.maximum(y - e, y * BAR_FLOOR)
    return {"x": centers[keep] / scale_x, "y": y, "low": low, "high": y + e}


def _empty_points():
    return {"x": [], "y": [], "low": [], "high": []}


def prepare_photons(comparison):
    """Histograms of every run's recorded photons in display units (runs on the worker thread).

    Returns
    -------
    dict or None
        None when no run recorded photons. Else ``energy_unit`` (label), ``energy_edges`` (bin
        edges in that unit), ``angle_unit``,
        ``number`` / ``energy`` / ``angle`` {model: plot columns x, y, low, high} for dN/dε
        (photons per energy unit), dE/dε (dimensionless) and dN/dΩ (photons per sr);
        ``classical`` {model: {x, number, energy}} of the synchrotron-function spectrum of
        the same orbit (one-particle runs); ``totals`` {label: J}; ``counts`` {model: (recorded,
        real photons, dropped)}; ``notes`` (list of str).
    """
    runs = runs_of(comparison)
    tables = {m: r.photons for m, r in runs.items() if getattr(r, "photons", None) is not None}
    if not tables:
        return None
    counts = {m: (len(p), float(p.weight.sum()), int(p.dropped)) for m, p in tables.items()}
    totals = photon_analysis.emitted_energy(comparison) if hasattr(comparison, "energy_radiated") else {}
    notes = []
    emitted = {m: p for m, p in tables.items() if np.any(p.energy > 0)}
    data = {"number": {}, "energy": {}, "angle": {}, "classical": {}, "counts": counts, "totals": totals,
            "energy_unit": "eV", "angle_unit": "rad", "notes": notes}
    if not emitted:
        notes.append("no photon was recorded above photon_min_energy in this run.")
        return data
    low = min(float(p.energy[p.energy > 0].min()) for p in emitted.values())
    high = max(float(p.energy.max()) for p in emitted.values())
    edges = np.geomspace(low, max(high, low * 1.01) * (1 + 1e-12), ENERGY_BINS + 1)
    centers = np.sqrt(edges[1:] * edges[:-1])
    e_label, e_scale = pick_unit(high / constants.e, ENERGY_UNITS)
    e_scale *= constants.e                      # J per display unit
    data["energy_unit"] = e_label
    data["energy_edges"] = edges / e_scale
    angles = {}
    for model, table in emitted.items():
        number = photon_analysis.energy_spectrum(table, edges)
        energy = photon_analysis.energy_spectrum(table, edges, weighted_by_energy=True)
        # dN/dε per display unit of energy: the density per J times J per unit
        data["number"][model] = _points(centers, number.density * e_scale, number.error * e_scale, e_scale, 1.0)
        data["energy"][model] = _points(centers, energy.density, energy.error, e_scale, 1.0)
        angles[model] = photon_analysis.angular_distribution(table)
        result = runs[model]
        if hasattr(result, "power") and getattr(result, "stats", None) is None and len(result.t) > 1:
            try:
                dn, de = photon_analysis.classical_spectrum(result, centers)
            except ScenarioError as exc:
                notes.append(f"{MODEL_LABELS[model]}: no classical spectrum ({exc})")
            else:
                data["classical"][model] = {"x": centers / e_scale, "number": np.where(dn > 0, dn * e_scale, np.nan),
                                            "energy": np.where(de > 0, de, np.nan)}
        else:
            notes.append("the classical spectrum is drawn for one-particle runs only (a beam's photons come "
                         "from many orbits).")
    top = max(float(h.edges[-1]) for h in angles.values())
    a_label, a_scale = pick_unit(top, ANGLE_UNITS)
    data["angle_unit"] = a_label
    for model, h in angles.items():
        data["angle"][model] = _points(h.centers, h.density, h.error, a_scale, 1.0)
    dropped = sum(c[2] for c in counts.values())
    if dropped:
        notes.append(f"{dropped:,} photons above photon_min_energy were counted but not kept (memory cap); "
                     "raise photon_min_energy to keep the rest.")
    return data


def totals_html(data):
    """Radiated energy per model and the photons recorded, as a small table."""
    rows = []
    for label, joules in data["totals"].items():
        model = label.split(" (")[0]
        color = MODEL_STYLES.get(model, {}).get("color", "#3e4c59")
        name = MODEL_LABELS.get(model, model) + (" — recorded photons" if "(photons)" in label else "")
        rows.append(f'<tr><th><span style="color:{color}">■</span> {html.escape(name)}</th>'
                    f'<td id="photon-total-{html.escape(label.replace(" ", "-").replace("(", "").replace(")", ""))}">'
                    f"{html.escape(energy_text(joules))}</td></tr>")
    for model, (recorded, real, dropped) in data["counts"].items():
        extra = f", {dropped:,} more not kept" if dropped else ""
        rows.append(f"<tr><th>{html.escape(MODEL_LABELS[model])} — photons recorded</th>"
                    f'<td id="photon-count-{model}">{recorded:,} ({real:.4g} real{extra})</td></tr>')
    return ('<table class="ro-summary" id="photon-totals" style="font-size:13px">'
            '<thead><tr><th>energy radiated (weighted sum over the particles)</th><th></th></tr></thead>'
            f'<tbody>{"".join(rows)}</tbody></table>')


class PhotonView(Viewer):
    """Photon spectra with error bars, the classical spectrum on the same axes, angles and totals."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self.message = html_pane(f'<div class="ro-note" id="photons-message">{html.escape(NO_PHOTONS)}</div>',
                                 sizing_mode="stretch_width")
        self.totals = html_pane("", sizing_mode="stretch_width", margin=(4, 8))
        self.sources = {(kind, m): ColumnDataSource(_empty_points()) for kind in ("number", "energy", "angle")
                        for m in DRAW_ORDER}
        self.classical = {m: ColumnDataSource({"x": [], "number": [], "energy": []}) for m in DRAW_ORDER}
        specs = {
            "number": ("photon number spectrum dN/dε", "photon energy ε (eV)", "dN/dε (photons per eV)", "log"),
            "energy": ("photon energy spectrum dE/dε", "photon energy ε (eV)", "dE/dε", "log"),
            "angle": ("angular distribution dN/dΩ about the mean direction", "θ (rad)", "dN/dΩ (photons per sr)",
                      "linear"),
        }
        self.figures = {}
        for kind, (title, xlabel, ylabel, x_axis) in specs.items():
            fig = new_figure(title, xlabel, ylabel, height=300, x_axis_type=x_axis, y_axis_type="log")
            for m in DRAW_ORDER:
                source = self.sources[(kind, m)]
                color = MODEL_STYLES[m]["color"]
                fig.segment("x", "low", "x", "high", source=source, color=color, line_width=1.2,
                            legend_label=MODEL_LABELS[m])
                fig.scatter("x", "y", source=source, size=5, color=color, legend_label=MODEL_LABELS[m])
                if kind != "angle":
                    fig.line("x", kind, source=self.classical[m], legend_label=CLASSICAL_LABEL, **CLASSICAL_STYLE)
            style_legend(fig)
            self.figures[kind] = fig
        self.plots = pn.Column(*[pn.pane.Bokeh(f, sizing_mode="stretch_width") for f in self.figures.values()],
                               sizing_mode="stretch_width", visible=False, margin=0)
        self.layout = pn.Column(self.message, self.totals, self.plots, sizing_mode="stretch_width", margin=0)
        state.param.watch(self._show, "prepared")
        self._show()

    def __panel__(self):
        return self.layout

    def _show(self, *_):
        data = (self.state.prepared or {}).get("photons")
        if data is None:
            self.message.object = f'<div class="ro-note" id="photons-message">{html.escape(NO_PHOTONS)}</div>'
            self.totals.object = ""
            self.plots.visible = False

            def clear():
                for source in self.sources.values():
                    source.data = _empty_points()
                for source in self.classical.values():
                    source.data = {"x": [], "number": [], "energy": []}

            apply_to_models(clear)
            return
        notes = ["Each point is a bin of recorded photons (real photons: weights applied) with its Poisson "
                 "standard error (a bar reaching below a tenth of the value stops there); the dot-dashed line "
                 "is the classical synchrotron-function spectrum of the same orbit, which the quantum "
                 "spectrum approaches as χ → 0.", *data["notes"]]
        self.message.object = "".join(f'<div class="ro-note">{html.escape(n)}</div>' for n in notes)
        self.totals.object = totals_html(data)
        self.plots.visible = bool(data["number"])

        def change():
            for (kind, m), source in self.sources.items():
                source.data = data[kind].get(m) or _empty_points()
            for m, source in self.classical.items():
                source.data = data["classical"].get(m) or {"x": [], "number": [], "energy": []}
            show_legend_items(self.figures.values(), data["number"])
            for fig in self.figures.values():
                for legend in fig.legend:
                    for item in legend.items:
                        if legend_text(item) == CLASSICAL_LABEL:
                            item.visible = bool(data["classical"])
            unit = data["energy_unit"]
            self.figures["number"].xaxis.axis_label = f"photon energy ε ({unit})"
            self.figures["number"].yaxis.axis_label = f"dN/dε (photons per {unit})"
            self.figures["energy"].xaxis.axis_label = f"photon energy ε ({unit})"
            self.figures["angle"].xaxis.axis_label = f"θ from the mean photon direction ({data['angle_unit']})"

        apply_to_models(change)
