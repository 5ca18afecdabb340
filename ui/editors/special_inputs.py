"""Input rows for the non-numeric field parameters: a file (with upload), a formula, a table.

They share ``EntryRow``'s interface (``path``, ``key``, ``boxes``, ``show_error``) so the
field composer and its ``ErrorBoard`` treat them alike. Like every editor they only
write raw values into the draft; the Scenario validates. The formula box also shows
the parser's own message while typing (``tracker.fields.expression.compile_formula``
is a syntax check, not physics).
"""

import html

import panel as pn
from panel.viewable import Viewer

from tracker.fields.base import REQUIRED

from ..state import error_belongs_to, key_path
from ..theme import html_pane
from .inputs import BAD_INPUT_CSS, LABEL_WIDTH, UNIT_WIDTH, slug

FORMULA_WIDTH = 330
FILE_WIDTH = 250
TABLE_WIDTH = 330


class _SpecialRow(Viewer):
    """Label, one widget (plus extras), the engine's error under it."""

    def __init__(self, state, path, label, doc="", unit=""):
        super().__init__()
        self.state = state
        self.path = tuple(path)
        self.key = key_path(self.path)
        self.kind = "text"
        self._label = html_pane(
            f'<span class="ro-label" title="{html.escape(doc)}">{html.escape(label)}</span>',
            width=LABEL_WIDTH, margin=(8, 4, 0, 8))
        self._unit = html_pane(f'<span class="ro-unit">{html.escape(unit)}</span>', width=UNIT_WIDTH,
                               margin=(8, 0, 0, 4))
        self._error = html_pane("", visible=False, margin=(0, 8, 4, LABEL_WIDTH + 12), sizing_mode="stretch_width")
        self._boxes = []

    def _layout_with(self, *widgets, below=()):
        return pn.Column(pn.Row(self._label, *widgets, self._unit, margin=0), *below, self._error, margin=0,
                         sizing_mode="stretch_width")

    def __panel__(self):
        return self._layout

    @property
    def boxes(self):
        return list(self._boxes)

    def show_errors(self, errors):
        """Show the messages of ``errors`` ({key path: message}) that name this input."""
        mine = [(key, message) for key, message in errors.items() if error_belongs_to(key, self.key)]
        self.show_error(mine[0][0] if mine else "", "\n".join(message for _key, message in mine))

    @property
    def error_text(self):
        """The HTML of the messages shown under the row ('' when none)."""
        return self._error.object if self._error.visible else ""

    def show_error(self, error_key, message):
        """Show ``message`` under the row when ``error_key`` names this input."""
        mine = error_belongs_to(error_key, self.key)
        text = (f'<pre class="ro-error" id="err-{slug(self.key)}" style="color:#b3261e;font-size:12.5px;'
                f'white-space:pre-wrap;margin:0">{html.escape(message)}</pre>') if mine else ""
        if self._error.object != text:
            self._error.object = text
        self._error.visible = mine
        for box in self._boxes:
            classes = [c for c in box.css_classes if c != "ro-bad"]
            box.css_classes = classes + (["ro-bad"] if mine else [])


class FileEntryRow(_SpecialRow):
    """A file name (relative to the scenario file, or absolute) and an upload button.

    An upload is kept for the session (``LabState.store_upload``) and the draft names
    it by its absolute path. ``stacked`` puts the upload button under the name (narrow columns).
    """

    def __init__(self, state, path, label, doc="", default=REQUIRED, accept=".h5,.hdf5,.csv", stacked=False):
        super().__init__(state, path, label, doc)
        value = state.value(self.path)
        name = slug(self.key)
        self._name = pn.widgets.TextInput(value=value if isinstance(value, str) else "", width=FILE_WIDTH,
                                          placeholder="required" if default is REQUIRED else "optional",
                                          margin=(2, 4), css_classes=[f"in-{name}"], stylesheets=[BAD_INPUT_CSS])
        self._upload = pn.widgets.FileInput(accept=accept, multiple=False, width=190, margin=(2, 4),
                                            css_classes=[f"upload-{name}"])
        self._name.param.watch(self._typed, "value")
        self._upload.param.watch(self._uploaded, "value")
        self._boxes = [self._name]
        if stacked:   # a narrow column (the sidebar): the upload button goes under the name
            self._layout = self._layout_with(self._name, below=(pn.Row(self._upload,
                                                                       margin=(0, 0, 0, LABEL_WIDTH + 8)),))
        else:
            self._layout = self._layout_with(self._name, self._upload)

    def _typed(self, event):
        text = (event.new or "").strip()
        self.state.set_value(self.path, text or None)

    def _uploaded(self, event):
        if not event.new:
            return
        stored = self.state.store_upload(self._upload.filename or "map.h5", event.new)
        self._name.value = stored  # writes the draft through _typed

    def upload(self, filename, content):
        """Act as the browser does after a file was chosen (tests and scripted use)."""
        self._upload.filename = filename
        self._upload.value = content


class FormulaEntryRow(_SpecialRow):
    """A formula box; the parser's message shows while typing, the Scenario's after each commit."""

    def __init__(self, state, path, label, doc="", unit="", parameters_path=None):
        super().__init__(state, path, label, doc, unit)
        self.kind = "formula"
        self._parameters_path = tuple(parameters_path) if parameters_path else None
        value = state.value(self.path)
        name = slug(self.key)
        self._text = pn.widgets.TextInput(value=value if isinstance(value, str) else "", width=FORMULA_WIDTH,
                                          placeholder="optional (0)", margin=(2, 4), css_classes=[f"in-{name}"],
                                          stylesheets=[BAD_INPUT_CSS])
        self._live = html_pane("", visible=False, margin=(0, 8, 2, LABEL_WIDTH + 12), sizing_mode="stretch_width")
        self._text.param.watch(self._typing, "value_input")
        self._text.param.watch(self._committed, "value")
        self._boxes = [self._text]
        self._layout = self._layout_with(self._text, below=(self._live,))

    def _parameter_names(self):
        table = self.state.value(self._parameters_path) if self._parameters_path else None
        return {name: 1.0 for name in table} if isinstance(table, dict) else {}

    def live_message(self, text):
        """The parser's message for ``text`` ('' when it compiles or is empty)."""
        from tracker.fields.expression import FormulaError, compile_formula

        if not (text or "").strip():
            return ""
        try:
            compile_formula(text, self._parameter_names())
        except FormulaError as exc:
            return str(exc)
        return ""

    def _typing(self, event):
        message = self.live_message(event.new)
        self._live.object = (f'<pre class="ro-live" style="color:#8a4b00;font-size:12.5px;white-space:pre-wrap;'
                             f'margin:0">{html.escape(message)}</pre>') if message else ""
        self._live.visible = bool(message)

    def _committed(self, event):
        self._live.visible = False
        text = (event.new or "").strip()
        self.state.set_value(self.path, text or None)


def table_to_text(value):
    """'name = value' lines for a raw table ({'B0': '2 T'})."""
    if not isinstance(value, dict):
        return ""
    return "\n".join(f"{name} = {v}" for name, v in value.items())


def text_to_table(text):
    """{name: raw value} from 'name = value' lines (numbers as numbers, the rest as text)."""
    from ..entries import entry_to_raw

    out = {}
    for line in (text or "").replace(";", "\n").replace(",", "\n").splitlines():
        if not line.strip():
            continue
        name, sep, value = line.partition("=")
        out[name.strip()] = entry_to_raw(value) if sep else None
    return out


class TableEntryRow(_SpecialRow):
    """Named quantities, one 'name = value with unit' per line (e.g. 'B0 = 2 T')."""

    def __init__(self, state, path, label, doc=""):
        super().__init__(state, path, label, doc)
        self.kind = "table"
        name = slug(self.key)
        self._text = pn.widgets.TextAreaInput(value=table_to_text(state.value(self.path)), width=TABLE_WIDTH,
                                              height=80, placeholder="B0 = 2 T\nL = 0.5 m", margin=(2, 4),
                                              css_classes=[f"in-{name}"], stylesheets=[BAD_INPUT_CSS])
        self._text.param.watch(self._changed, "value")
        self._boxes = [self._text]
        self._layout = self._layout_with(self._text)

    def _changed(self, event):
        table = text_to_table(event.new)
        # a name without "= value" is kept as text so the Scenario names it in its message
        table = {k: (v if v is not None else "") for k, v in table.items()}
        self.state.set_value(self.path, table or None, relayout=False)
