"""Export: each model run's full Result as HDF5 or CSV (written by Result.to_hdf5 / to_csv)."""

import io
import tempfile
from pathlib import Path

import panel as pn
from panel.viewable import Viewer

from ..editors.source import scenario_stem
from ..theme import html_pane
from .palette import DRAW_ORDER, MODEL_LABELS
from .runs import runs_of

FORMATS = {"h5": "HDF5", "csv": "CSV"}


def result_bytes(result, suffix):
    """File contents of a Result written by the engine's own writer ('h5' or 'csv')."""
    with tempfile.TemporaryDirectory(prefix="radorbit-lab-") as tmp:
        path = Path(tmp) / f"result.{suffix}"
        if suffix == "h5":
            result.to_hdf5(path)
        else:
            result.to_csv(path)
        return path.read_bytes()


class ExportView(Viewer):
    """Download buttons for every model run in both formats (full data, not the drawn points)."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self.buttons = {}
        for name in DRAW_ORDER:
            for suffix, label in FORMATS.items():
                button = pn.widgets.FileDownload(
                    callback=lambda n=name, s=suffix: self._file(n, s), filename=f"result-{name}.{suffix}",
                    label=f"{MODEL_LABELS[name]} · {label}", width=210, margin=(4, 6), disabled=True,
                    css_classes=[f"download-{name}-{suffix}"])
                self.buttons[(name, suffix)] = button
        self._note = html_pane(
            '<div class="ro-note">Full saved states in SI with units (HDF5 also holds the scenario, the '
            "run metadata and any recorded photons). Plots: use the save tool in each plot's toolbar for a "
            "PNG.</div>",
            sizing_mode="stretch_width", margin=(0, 8))
        # only the buttons of the models run are in the row: hidden ones would still widen it
        self._row = pn.FlexBox(flex_wrap="wrap", margin=0, sizing_mode="stretch_width")
        self._layout = pn.Column(self._row, self._note, sizing_mode="stretch_width", margin=0)
        state.param.watch(self._refresh, "comparison")
        self._refresh()

    def __panel__(self):
        return self._layout

    def _refresh(self, *_):
        stem = scenario_stem(self.state.source)
        runs = runs_of(self.state.comparison)
        for (name, suffix), button in self.buttons.items():
            run = runs.get(name)
            button.disabled = run is None
            partial = run is not None and not run.complete
            button.filename = f"{stem}-{name}{'-partial' if partial else ''}.{suffix}"
        self._row.objects = [button for (name, _suffix), button in self.buttons.items() if name in runs]

    def _file(self, name, suffix):
        run = runs_of(self.state.comparison).get(name)
        if run is None:
            return None
        return io.BytesIO(result_bytes(run, suffix))
