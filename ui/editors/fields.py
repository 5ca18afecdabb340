"""Field composer: the list of field components, each with a form built from the registry.

Every form is generated from ``tracker.fields.MODELS`` (``FieldModel.params``: name,
kind, dimension, unit, default, choices, doc), so a newly registered field model is
offered and editable with no change here.
"""

import html

import panel as pn
from panel.viewable import Viewer

from tracker.fields import MODELS as FIELD_MODELS

from ..state import field_model
from .inputs import ErrorBoard, RowCache
from .special_inputs import FileEntryRow, FormulaEntryRow, TableEntryRow
from ..theme import UNITS_NOTE, html_pane

CARD_HEADER = "#e6ecf2"


def model_options():
    """{label shown in the menu: registered name}, read from the registry each time."""
    return {f"{model.label} ({name})": name for name, model in FIELD_MODELS.items()}


def field_row(cache, index, model, p):
    """The input row for one parameter: chosen by the parameter's kind (number, vector, choice,
    file, formula or table), so a new model needs no code here. Plain rows are kept across
    rebuilds by ``cache`` (their boxes stay in the page)."""
    state = cache.state
    path = ("field", index, p.name)
    if p.kind == "path":
        return FileEntryRow(state, path, p.name, doc=p.doc, default=p.default)
    if p.kind == "formula":
        tables = [q.name for q in model.params if q.kind == "table"]
        return FormulaEntryRow(state, path, p.name, doc=p.doc, unit=p.unit,
                               parameters_path=("field", index, tables[0]) if tables else None)
    if p.kind == "table":
        return TableEntryRow(state, path, p.name, doc=p.doc)
    return cache.row(path, p.name, p.kind, unit=p.unit, dimension=p.dimension, doc=p.doc, default=p.default,
                     choices=p.choices)


def field_rows(cache, index, model):
    """One input row per parameter of ``model`` for field component ``index``."""
    return [field_row(cache, index, model, p) for p in model.params]


class FieldComposer(Viewer):
    """Add, remove and reorder field components; edit each through its generated form."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self.board = ErrorBoard(state)
        self.cache = RowCache(state)
        self._card_cache = {}  # (index, type) -> (card, up, down, rows): kept so its boxes stay in the page
        self.rows = []  # EntryRows of the current forms (for tests and the error board)
        self._type = pn.widgets.Select(options=model_options(), width=300, margin=(4, 4),
                                       css_classes=["field-type-select"])
        self._add = pn.widgets.Button(label="Add field", color="primary", width=110, margin=(4, 4),
                                      css_classes=["add-field"])
        self._add.on_click(self._add_clicked)
        self._cards = pn.Column(sizing_mode="stretch_width", margin=0)
        self._empty = html_pane('<div class="ro-note">No field components: the particle moves '
                                   "freely. Add one below.</div>", margin=(4, 8))
        self._layout = pn.Column(
            html_pane(UNITS_NOTE, margin=(0, 8), sizing_mode="stretch_width"),
            self._cards,
            pn.Row(self._type, self._add, margin=(6, 0)),
            sizing_mode="stretch_width", margin=0,
        )
        state.param.watch(self._rebuild, "layout_version")
        self._rebuild()

    def __panel__(self):
        return self._layout

    def _add_clicked(self, _event):
        self.state.add_field(self._type.value)

    def _rebuild(self, *_):
        self.board.reset()
        self.rows = []
        self._type.options = model_options()
        fields = self.state.fields()
        cards = []
        for index, raw in enumerate(fields):
            cards.append(self._card(index, raw, len(fields)))
        self._cards.objects = cards or [self._empty]

    def _card(self, index, raw, count):
        type_name = raw.get("type") if isinstance(raw, dict) else None
        model = field_model(type_name)
        if model is not None and (index, model.name) in self._card_cache:
            card, up, down, rows = self._card_cache[(index, model.name)]
            up.disabled, down.disabled = index == 0, index == count - 1
            for row in field_rows(self.cache, index, model):  # the same rows, values refreshed
                self.board.add(row)
            self.rows.extend(rows)
            return card
        up = pn.widgets.Button(label="↑", width=34, margin=(0, 2), disabled=index == 0,
                               description="move up", css_classes=[f"field-{index}-up"])
        down = pn.widgets.Button(label="↓", width=34, margin=(0, 2), disabled=index == count - 1,
                                 description="move down", css_classes=[f"field-{index}-down"])
        remove = pn.widgets.Button(label="✕", width=34, margin=(0, 2), description="remove this field",
                                   css_classes=[f"field-{index}-remove"])
        up.on_click(lambda _e, i=index: self.state.move_field(i, -1))
        down.on_click(lambda _e, i=index: self.state.move_field(i, +1))
        remove.on_click(lambda _e, i=index: self.state.remove_field(i))
        if model is None:
            title = f"field[{index}] · unknown type {type_name!r}"
            body = [html_pane(f'<div class="ro-note">This type is not registered. Registered types: '
                                 f'{html.escape(", ".join(FIELD_MODELS))}. Remove it or fix the file.</div>')]
        else:
            title = f"field[{index}] · {model.label}"
            rows = field_rows(self.cache, index, model)
            for row in rows:
                self.board.add(row)
            self.rows.extend(rows)
            body = [html_pane(f'<div class="ro-doc">{html.escape(model.doc)}</div>', margin=(2, 8),
                                 sizing_mode="stretch_width"), *rows]
        header = pn.Row(
            html_pane(f'<b class="ro-card-title">{html.escape(title)}</b>', margin=(6, 6),
                         sizing_mode="stretch_width"),
            up, down, remove, sizing_mode="stretch_width", margin=0,
        )
        card = pn.Card(*body, header=header, collapsible=False, header_background=CARD_HEADER,
                       sizing_mode="stretch_width", margin=(4, 0), css_classes=[f"field-card-{index}"])
        if model is not None:
            self._card_cache[(index, model.name)] = (card, up, down, rows)
        return card
