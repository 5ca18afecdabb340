"""Particle editor: species, start position, and the momentum given one of the engine's ways."""

import html

import panel as pn
from panel.viewable import Viewer

from tracker import constants
from tracker.fields.base import REQUIRED

from .. import schema
from ..format import number_text
from .inputs import ErrorBoard, RowCache
from ..theme import UNITS_NOTE, html_pane


def particle_row(cache, name, default=None):
    """EntryRow (kept across rebuilds by ``cache``) for one particle input of ``schema.PARTICLE_ENTRIES``."""
    e = schema.PARTICLE_ENTRIES[name]
    return cache.row(("particle", name), e.label, e.kind, unit=e.unit, dimension=e.dimension, doc=e.doc,
                     default=default, choices=e.choices)


def particle_readout(scenario):
    """HTML line with the engine's view of the particle: gamma0, charge, mass (display only)."""
    if scenario is None:
        return '<div class="ro-readout" id="particle-readout">–</div>'
    p = scenario.particle
    rest_mev = p.mass * constants.c**2 / constants.e / 1e6
    return (f'<div class="ro-readout" id="particle-readout">γ₀ = {number_text(p.gamma, 7)} · '
            f'q = {number_text(p.charge / constants.e, 6)} e · '
            f'm c² = {number_text(rest_mev, 7)} MeV</div>')


class ParticleEditor(Viewer):
    """Species (with ion/custom extras), position, momentum kind and value, direction."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self.board = ErrorBoard(state)
        self.cache = RowCache(state)
        self.rows = []
        self._form = pn.Column(sizing_mode="stretch_width", margin=0)
        self._readout = html_pane(particle_readout(state.scenario), margin=(4, 8), sizing_mode="stretch_width")
        self._layout = pn.Column(html_pane(UNITS_NOTE, margin=(0, 8), sizing_mode="stretch_width"),
                                 self._form, self._readout, sizing_mode="stretch_width", margin=0)
        state.param.watch(self._rebuild, "layout_version")
        state.param.watch(lambda *_: setattr(self._readout, "object", particle_readout(state.scenario)),
                          "scenario")
        self._rebuild()

    def __panel__(self):
        return self._layout

    def _rebuild(self, *_):
        state = self.state
        self.board.reset()
        particle = state.table("particle")
        species = particle.get("species", "custom" if ("mass" in particle or "charge" in particle) else None)
        names = schema.species_names()
        species_select = pn.widgets.Select(options=list(names), value=species if species in names else names[0],
                                           width=214, margin=(2, 4), css_classes=["in-particle-species"])
        species_select.param.watch(lambda e: state.set_species(e.new), "value")
        kinds = {schema.MOMENTUM_LABELS.get(k, k): k for k in schema.momentum_keys()}
        kind = state.momentum_kind()
        kind_select = pn.widgets.Select(options=kinds, value=kind, width=214, margin=(2, 4),
                                        css_classes=["in-particle-kind"])
        kind_select.param.watch(lambda e: state.set_momentum_kind(e.new), "value")
        rows = [particle_row(self.cache, name, default=None) for name in schema.SPECIES_EXTRAS.get(species, ())]
        rows.append(particle_row(self.cache, "position", default=(0.0, 0.0, 0.0)))
        value_row = particle_row(self.cache, kind, default=REQUIRED)
        direction_rows = ([particle_row(self.cache, "direction", default=REQUIRED)]
                          if kind in schema.scalar_momentum_keys() else [])
        self.rows = rows + [value_row] + direction_rows
        for row in self.rows:
            self.board.add(row)
        self._form.objects = [
            _labelled("species", species_select),
            *rows,
            _labelled("momentum given as", kind_select),
            value_row,
            *direction_rows,
        ]


def _labelled(label, widget):
    return pn.Row(html_pane(f'<span class="ro-label">{html.escape(label)}</span>', width=128,
                               margin=(8, 4, 0, 8)), widget, margin=0)
