"""Time series of every model run: γ(t), Liénard power P(t) (linear or log), radiated energy W(t), χ(t)."""

import numpy as np
import panel as pn
from bokeh.models import ColumnDataSource, Range1d
from panel.viewable import Viewer

from tracker import constants

from ..format import TIME_UNITS, energy_unit, pick_unit
from .decimate import MAX_SERIES_BUCKETS, minmax_indices
from .document import apply_to_models
from ..theme import checkbox
from .palette import DRAW_ORDER, MODEL_LABELS, MODEL_STYLES, new_figure, show_legend_items, style_legend
from .runs import runs_of

COLUMNS = ("t", "gamma", "power", "power_log", "energy", "chi")


def _empty():
    return {c: [] for c in COLUMNS}


def prepare_series(comparison):
    """Decimated time series of every model run in common display units.

    Parameters
    ----------
    comparison : tracker.Comparison

    Returns
    -------
    dict
        ``time_unit``/``time_scale`` (s per unit), ``energy_unit``/``energy_scale`` (J per
        unit), ``runs`` {model: {t, gamma, power (W), power_log (W, NaN where <= 0),
        energy (cumulative radiated, in energy units), chi}}.
    """
    results = runs_of(comparison)
    t_max = max((float(r.t[-1]) for r in results.values() if len(r.t)), default=0.0)
    w_max = max((float(np.max(np.abs(r.radiated_energy))) for r in results.values() if len(r.t)), default=0.0)
    time_unit, time_scale = pick_unit(t_max, TIME_UNITS)
    e_unit, e_scale = energy_unit(w_max) if w_max > 0 else ("eV", constants.e)
    runs = {}
    for name, r in results.items():
        if not len(r.t):
            runs[name] = _empty()
            continue
        idx = minmax_indices([r.gamma, r.power, r.radiated_energy, r.chi], MAX_SERIES_BUCKETS)
        power = r.power[idx]
        runs[name] = {
            "t": r.t[idx] / time_scale,
            "gamma": r.gamma[idx],
            "power": power,
            "power_log": np.where(power > 0, power, np.nan),
            "energy": r.radiated_energy[idx] / e_scale,
            "chi": r.chi[idx],
        }
    gamma_label = "γ"
    first = next((r.gamma[0] for r in results.values() if len(r.t)), None)
    spread = max((float(np.ptp(run["gamma"])) for run in runs.values() if len(run["t"])), default=0.0)
    if first is not None and 0 < spread < RELATIVE_GAMMA * first:
        # a nearly constant γ reads better as its relative change (display only)
        gamma_label = "γ/γ₀ − 1"
        for run in runs.values():
            if len(run["t"]):
                run["gamma"] = run["gamma"] / first - 1.0
    limits = {column: axis_limits([run[column] for run in runs.values()], log=column == "power_log")
              for column in COLUMNS}
    return {"time_unit": time_unit, "time_scale": time_scale, "energy_unit": e_unit, "energy_scale": e_scale,
            "runs": runs, "limits": limits, "gamma_label": gamma_label}


#: below this relative spread γ(t) is drawn as γ/γ₀ - 1 (display only; common practice, no source)
RELATIVE_GAMMA = 1e-4

#: empty space around curves, as a fraction of their span (display only)
PAD = 0.05


def axis_limits(columns, log=False):
    """(start, end) of an axis showing every finite value of ``columns`` with a margin.

    On a log axis only positive values count and the margin is a factor. None when
    there is nothing to show.
    """
    values = np.concatenate([np.asarray(c, dtype=float) for c in columns]) if columns else np.array([])
    values = values[np.isfinite(values)]
    if log:
        values = values[values > 0]
    if not values.size:
        return None
    lo, hi = float(values.min()), float(values.max())
    if log:
        factor = (hi / lo) ** PAD if hi > lo else 2.0
        return lo / factor, hi * factor
    pad = PAD * (hi - lo) if hi > lo else (abs(hi) * 1e-3 or 1.0)
    return lo - pad, hi + pad


class SeriesView(Viewer):
    """Four panels over a shared time axis; the power panel switches between linear and log."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        # explicit ranges, set from each result: auto-ranging kept the extent of an earlier run
        t_range = Range1d(0, 1)
        self.ranges = {"t": t_range}
        self.sources = {model: ColumnDataSource(_empty()) for model in DRAW_ORDER}
        specs = {
            "gamma": ("Lorentz factor γ(t)", "γ", {}),
            "power": ("Liénard power P(t)", "P (W)", {}),
            "power_log": ("Liénard power P(t), log scale", "P (W)", {"y_axis_type": "log"}),
            "energy": ("radiated energy W(t), cumulative", "W (eV)", {}),
            "chi": ("quantum parameter χ(t)", "χ", {}),
        }
        self.figures = {}
        for column, (title, ylabel, extra) in specs.items():
            self.ranges[column] = Range1d(1, 10) if column == "power_log" else Range1d(0, 1)
            fig = new_figure(title, "t (s)", ylabel, height=250, x_range=t_range, y_range=self.ranges[column],
                             **extra)
            for model in DRAW_ORDER:
                fig.line("t", column, source=self.sources[model], legend_label=MODEL_LABELS[model],
                         **MODEL_STYLES[model])
            style_legend(fig)
            self.figures[column] = fig
        # a checkbox with its label: a click on the words toggles it too
        self.log_power = checkbox("log scale for the Liénard power P(t)", value=False,
                                             margin=(8, 8), css_classes=["log-power"])
        self._panes = {c: pn.pane.Bokeh(f, sizing_mode="stretch_width") for c, f in self.figures.items()}
        self._panes["power_log"].visible = False
        self.log_power.param.watch(self._toggle_log, "value")
        power_box = pn.Column(self._panes["power"], self._panes["power_log"], sizing_mode="stretch_width",
                              margin=0)
        self._layout = pn.Column(
            self.log_power,
            pn.GridBox(self._panes["gamma"], power_box, self._panes["energy"], self._panes["chi"], ncols=2,
                       sizing_mode="stretch_width"),
            sizing_mode="stretch_width", margin=0)
        state.param.watch(self._show, "prepared")
        self._show()

    def __panel__(self):
        return self._layout

    def _toggle_log(self, event):
        self._panes["power"].visible = not event.new
        self._panes["power_log"].visible = event.new

    def _show(self, *_):
        prepared = self.state.prepared
        if not prepared:
            def clear():  # no results (another scenario was opened): empty plots, not the old run
                for source in self.sources.values():
                    source.data = _empty()
                show_legend_items(self.figures.values(), {})

            apply_to_models(clear)
            return
        data = prepared["series"]

        def change():
            for model, source in self.sources.items():
                source.data = data["runs"].get(model) or _empty()
            show_legend_items(self.figures.values(), data["runs"])
            for column, limits in data["limits"].items():
                if limits is not None:
                    self.ranges[column].update(start=limits[0], end=limits[1], reset_start=limits[0],
                                               reset_end=limits[1])
            for fig in self.figures.values():
                fig.xaxis.axis_label = f"t ({data['time_unit']})"
            self.figures["energy"].yaxis.axis_label = f"W ({data['energy_unit']})"
            self.figures["gamma"].yaxis.axis_label = data["gamma_label"]

        apply_to_models(change)
