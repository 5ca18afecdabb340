"""One labelled input row (scalar, vector or choice) and the board that shows errors beside rows.

A row writes raw values into the ``LabState`` draft at its path; the Scenario then
validates the whole draft, and the ``ErrorBoard`` puts the engine's message under
the row whose key the message names.
"""

import html

import panel as pn
from panel.viewable import Viewer

from tracker.fields.base import REQUIRED

from ..entries import (entry_to_raw, list_entry, list_to_raw, raw_to_entry, transverse_to_raw, vector_entries,
                       vector_to_raw)
from ..format import unit_label
from ..schema import hint
from ..state import error_belongs_to, key_path
from ..theme import html_pane

#: marks an input whose value the engine rejected
BAD_INPUT_CSS = """
:host(.ro-bad) .bk-input { border-color: #b3261e; background: #fdf0ee; }
"""

LABEL_WIDTH = 128
SCALAR_WIDTH = 176
CHOICE_WIDTH = 214
COMPONENT_WIDTH = 92
UNIT_WIDTH = 62


def slug(key):
    """CSS-safe form of a key path: 'field[0].B' -> 'field-0-B'."""
    return key.replace("[", "-").replace("]", "").replace(".", "-")


def placeholder_texts(kind, default):
    """Placeholder text(s) saying what an empty box means: the default, 'optional' or 'required'."""
    if kind == "vector":
        if isinstance(default, (tuple, list)) and len(default) == 3:
            return [raw_to_entry(v) for v in default]
        word = "required" if default is REQUIRED else "optional"
        return [word, "", ""]
    if default is REQUIRED:
        return "required"
    if default is None:
        return "optional"
    return raw_to_entry(default)


class ErrorBoard:
    """Puts every message under the row it concerns; one state watcher per editor.

    Rows are registered on each form rebuild (``reset`` first), so rows of an old
    form do not linger.
    """

    def __init__(self, state):
        self.state = state
        self.rows = []
        state.param.watch(self._refresh, ["errors"])

    def reset(self):
        self.rows = []

    def add(self, row):
        self.rows.append(row)
        row.show_errors(self.state.errors)
        return row

    def _refresh(self, *_):
        for row in self.rows:
            row.show_errors(self.state.errors)


class RowCache:
    """Keeps one ``EntryRow`` per input across form rebuilds.

    A rebuilt form reuses the row of the same input (same path, kind, unit, default and
    choices) with its value refreshed, so the box in the page stays the same element:
    a value typed while a newly opened scenario's forms arrive goes to a box that stays,
    instead of to one that is being replaced (where it would be lost).
    """

    def __init__(self, state):
        self.state = state
        self._rows = {}

    def row(self, path, label, kind, unit="", dimension="dimensionless", doc="", default=REQUIRED, choices=()):
        key = (tuple(path), label, kind, unit, dimension, doc, id(default) if default is REQUIRED else repr(default),
               tuple(choices))
        row = self._rows.get(key)
        if row is None:
            row = self._rows[key] = EntryRow(self.state, path, label, kind, unit=unit, dimension=dimension, doc=doc,
                                             default=default, choices=choices)
        else:
            row.refresh()
        return row


class EntryRow(Viewer):
    """Label, one or three text boxes (or a selector), the SI unit, and the engine's error.

    Parameters
    ----------
    state : ui.state.LabState
    path : tuple
        Draft path, e.g. ``('field', 0, 'B')``.
    label : str
    kind : {'scalar', 'integer', 'vector', 'choice', 'boolean', 'list', 'transverse'}
    unit : str
        SI unit label ('' for a plain number).
    dimension : str
        Key of ``tracker.units.SI_UNITS`` (for the hint).
    doc : str
    default : object
        SI default, ``REQUIRED`` or None (optional).
    choices : sequence of str
        For ``kind='choice'``.
    """

    def __init__(self, state, path, label, kind, unit="", dimension="dimensionless", doc="",
                 default=REQUIRED, choices=()):
        super().__init__()
        self.state = state
        self.path = tuple(path)
        self.key = key_path(self.path)
        self.kind = kind
        self.default = default
        self._syncing = False
        value = state.value(self.path)
        name = slug(self.key)
        tip = "; ".join(t for t in (doc, hint(dimension, unit) if kind != "choice" else "") if t)
        self._label = html_pane(
            f'<span class="ro-label" title="{html.escape(tip)}">{html.escape(label)}</span>',
            width=LABEL_WIDTH, margin=(8, 4, 0, 8))
        if kind == "boolean":
            box = pn.widgets.Checkbox(value=bool(value if value is not None else default), margin=(8, 4),
                                      css_classes=[f"in-{name}"])
            box.param.watch(self._flag_changed, "value")
            self._boxes = [box]
        elif kind == "choice":
            options = list(choices)
            current = value if value in options else (default if default in options else options[0])
            box = pn.widgets.Select(options=options, value=current, width=CHOICE_WIDTH, margin=(2, 4),
                                    css_classes=[f"in-{name}"])
            box.param.watch(self._choice_changed, "value")
            self._boxes = [box]
        elif kind == "vector":
            texts = vector_entries(value)
            holders = placeholder_texts(kind, default)
            self._boxes = [
                pn.widgets.TextInput(value=t, placeholder=h or axis, width=COMPONENT_WIDTH, margin=(2, 2),
                                     css_classes=[f"in-{name}-{i}"], stylesheets=[BAD_INPUT_CSS])
                for i, (t, h, axis) in enumerate(zip(texts, holders, ("x", "y", "z")))
            ]
            for box in self._boxes:
                box.param.watch(self._vector_changed, "value")
        elif kind in ("list", "transverse"):
            holder = ("values separated by commas" if kind == "list" else
                      f"{placeholder_texts(kind, default)}; or two values, e1, e2")
            box = pn.widgets.TextInput(value=list_entry(value), placeholder=holder,
                                       width=SCALAR_WIDTH + COMPONENT_WIDTH, margin=(2, 4),
                                       css_classes=[f"in-{name}"], stylesheets=[BAD_INPUT_CSS])
            box.param.watch(self._list_changed if kind == "list" else self._transverse_changed, "value")
            self._boxes = [box]
        else:
            box = pn.widgets.TextInput(value=raw_to_entry(value), placeholder=placeholder_texts(kind, default),
                                       width=SCALAR_WIDTH, margin=(2, 4), css_classes=[f"in-{name}"],
                                       stylesheets=[BAD_INPUT_CSS])
            box.param.watch(self._scalar_changed, "value")
            self._boxes = [box]
        self._unit = html_pane(f'<span class="ro-unit">{html.escape(unit_label(unit))}</span>',
                                  width=UNIT_WIDTH, margin=(8, 0, 0, 4))
        self._error = None  # made with the first message: most rows never need one (page loads stay light)
        self._layout = pn.Column(pn.Row(self._label, *self._boxes, self._unit, margin=0),
                                 margin=0, sizing_mode="stretch_width")

    def __panel__(self):
        return self._layout

    @property
    def boxes(self):
        """The input widgets (one, or three for a vector)."""
        return list(self._boxes)

    # ------------------------------------------------------------------ edits
    def refresh(self):
        """Show the draft's current value (after a load or a reorder) without writing it back."""
        value = self.state.value(self.path)
        self._syncing = True
        try:
            if self.kind == "boolean":
                self._boxes[0].value = bool(value if value is not None else self.default is True)
            elif self.kind == "choice":
                box = self._boxes[0]
                options = list(box.options)
                box.value = value if value in options else (self.default if self.default in options else options[0])
            elif self.kind == "vector":
                for box, text in zip(self._boxes, vector_entries(value)):
                    box.value = text
            elif self.kind in ("list", "transverse"):
                self._boxes[0].value = list_entry(value)
            else:
                self._boxes[0].value = raw_to_entry(value)
        finally:
            self._syncing = False

    def _scalar_changed(self, event):
        if not self._syncing:
            self.state.set_value(self.path, entry_to_raw(event.new))

    def _vector_changed(self, _event):
        if not self._syncing:
            self.state.set_value(self.path, vector_to_raw([box.value for box in self._boxes]))

    def _list_changed(self, event):
        if not self._syncing:
            self.state.set_value(self.path, list_to_raw(event.new))

    def _transverse_changed(self, event):
        if not self._syncing:
            self.state.set_value(self.path, transverse_to_raw(event.new))

    def _flag_changed(self, event):
        # off is the default: leave the key out rather than write false
        if not self._syncing:
            self.state.set_value(self.path, True if event.new else None, relayout=True)

    def _choice_changed(self, event):
        if not self._syncing:
            self.state.set_value(self.path, event.new)

    # ------------------------------------------------------------------ errors
    def show_errors(self, errors):
        """Show every message of ``errors`` ({key path: message}) that names this input."""
        mine = {key: message for key, message in errors.items() if error_belongs_to(key, self.key)}
        body = "<br>".join(html.escape(message) for message in mine.values())
        text = (f'<div class="ro-error" id="err-{slug(self.key)}" '
                f'style="color:#b3261e;font-size:12.5px;">{body}</div>') if mine else ""
        if self._error is None:
            if not mine:
                self._mark_boxes(mine)
                return
            self._error = html_pane("", visible=False, margin=(0, 8, 4, LABEL_WIDTH + 12),
                                    sizing_mode="stretch_width")
            self._layout.append(self._error)
        if self._error.object != text:
            self._error.object = text
        self._error.visible = bool(mine)
        self._mark_boxes(mine)

    @property
    def error_text(self):
        """The HTML of the messages shown under the row ('' when none)."""
        return self._error.object if self._error is not None and self._error.visible else ""

    def _mark_boxes(self, mine):
        if self.kind == "boolean":
            return
        for i, box in enumerate(self._boxes):
            bad = bool(mine) and (self.kind != "vector" or any(k in (self.key, f"{self.key}[{i}]") for k in mine))
            classes = [c for c in box.css_classes if c != "ro-bad"]
            if classes + (["ro-bad"] if bad else []) != list(box.css_classes):
                box.css_classes = classes + (["ro-bad"] if bad else [])

    def show_error(self, error_key, message):
        """Show one message when ``error_key`` names this input (see ``show_errors``)."""
        self.show_errors({error_key: message} if error_key else {})
