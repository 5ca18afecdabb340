"""Particle editor: one particle or a beam; species, start position, the momentum given one of the
engine's ways, and for a beam its count, seed, spreads and distribution, or a particle file.

Every row is generated from the engine's input descriptors (``tracker.inputs`` through
``ui.schema``): ``[particle]`` rows from ``PARTICLE_ENTRIES``, ``[beam]`` rows from
``BEAM_ENTRIES`` (the same names: a beam's centroid is given like a particle). The editor
only writes raw values into the draft; ``Scenario.from_dict`` judges them.
"""

import html

import panel as pn
from panel.viewable import Viewer

from tracker import constants
from tracker.fields.base import REQUIRED

from .. import schema
from ..format import number_text
from .inputs import ErrorBoard, RowCache
from .special_inputs import FileEntryRow
from ..theme import UNITS_NOTE, html_pane

#: what a beam form says once, under the switch
BEAM_NOTE = ('<div class="ro-note" id="beam-note">A beam is sampled about its centroid (the particle given '
             "below) with the spreads you give, the same particles for the same seed; or read from a "
             "particle file (openPMD or CSV with units). Every ticked model runs the whole beam: the "
             "Beam tab draws it, the Results tab particle 0.</div>")


def particle_row(cache, name, default=None, section="particle"):
    """EntryRow (kept across rebuilds by ``cache``) for one input of the draft table ``section``
    ('particle' or 'beam'), read from its descriptor in ``schema.entries(section)``."""
    e = schema.entries(section)[name]
    return cache.row((section, name), e.label, e.kind, unit=e.unit, dimension=e.dimension, doc=e.doc,
                     default=default, choices=e.choices)


def beam_row(cache, name):
    """EntryRow for one of the beam's own inputs, its default taken from the descriptor."""
    return particle_row(cache, name, default=schema.BEAM_ENTRIES[name].default, section="beam")


def particle_readout(scenario):
    """HTML line with the engine's view of the particle (a beam's centroid): gamma0, charge,
    mass, and a beam's particle count (display only)."""
    if scenario is None:
        return '<div class="ro-readout" id="particle-readout">–</div>'
    p = scenario.particle
    rest_mev = p.mass * constants.c**2 / constants.e / 1e6
    beam = ""
    if scenario.beam is not None:
        made = "from a particle file" if scenario.beam.file else "sampled"
        beam = (f'<span id="beam-count" data-count="{scenario.particle_count}">{scenario.particle_count:,} '
                f"particles ({made})</span> · centroid ")
    return (f'<div class="ro-readout" id="particle-readout">{beam}γ₀ = {number_text(p.gamma, 7)} · '
            f'q = {number_text(p.charge / constants.e, 6)} e · '
            f'm c² = {number_text(rest_mev, 7)} MeV</div>')


class ParticleEditor(Viewer):
    """One particle or a beam: species (with ion/custom extras), position, momentum kind and
    value, direction; a beam adds its count, seed, spreads and distribution, or its file."""

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
        section = state.particle_section()
        table = state.table(section)
        mode_select = pn.widgets.RadioButtonGroup(
            options={label: mode for mode, label in schema.PARTICLE_MODES.items()}, value=section,
            color="light", margin=(2, 4), css_classes=["in-particle-mode"])
        mode_select.param.watch(lambda e: state.set_particle_mode(e.new), "value")
        head = [_labelled("track", mode_select)]
        source = state.beam_source() if section == "beam" else "sampled"
        if section == "beam":
            source_select = pn.widgets.Select(options={label: key for key, label in schema.BEAM_SOURCES.items()},
                                              value=source, width=214, margin=(2, 4), css_classes=["in-beam-source"])
            source_select.param.watch(lambda e: state.set_beam_source(e.new), "value")
            head += [html_pane(BEAM_NOTE, margin=(0, 8), sizing_mode="stretch_width"),
                     _labelled("particles", source_select)]
        species = table.get("species", "custom" if ("mass" in table or "charge" in table) else None)
        names = schema.species_names()
        species_select = pn.widgets.Select(options=list(names), value=species if species in names else names[0],
                                           width=214, margin=(2, 4), css_classes=[f"in-{section}-species"])
        species_select.param.watch(lambda e: state.set_species(e.new), "value")
        extras = [particle_row(self.cache, name, None, section) for name in schema.SPECIES_EXTRAS.get(species, ())]
        form = [*head, _labelled("species", species_select), *extras]
        self.rows = list(extras)
        if source == "file":
            file_row = FileEntryRow(state, ("beam", "file"), schema.BEAM_ENTRIES["file"].label,
                                    doc=schema.BEAM_ENTRIES["file"].doc, accept=schema.particle_file_types(),
                                    stacked=True)
            spread_rows = [file_row, *(beam_row(self.cache, name) for name in schema.BEAM_FROM_FILE
                                       if name != "file")]
            self.rows += spread_rows
            form += spread_rows
        else:
            kinds = {schema.MOMENTUM_LABELS.get(k, k): k for k in schema.momentum_keys()}
            kind = state.momentum_kind()
            kind_select = pn.widgets.Select(options=kinds, value=kind, width=214, margin=(2, 4),
                                            css_classes=[f"in-{section}-kind"])
            kind_select.param.watch(lambda e: state.set_momentum_kind(e.new), "value")
            position = particle_row(self.cache, "position", (0.0, 0.0, 0.0), section)
            value_row = particle_row(self.cache, kind, REQUIRED, section)
            direction_rows = ([particle_row(self.cache, "direction", REQUIRED, section)]
                              if kind in schema.scalar_momentum_keys() else [])
            spread_rows = ([beam_row(self.cache, name) for name in schema.BEAM_SAMPLED]
                           if section == "beam" else [])
            self.rows += [position, value_row, *direction_rows, *spread_rows]
            form += [position, _labelled("momentum given as", kind_select), value_row, *direction_rows]
            if spread_rows:
                form += [html_pane('<div class="ro-section">beam about this centroid</div>', margin=(6, 8, 0, 8)),
                         *spread_rows]
        for row in self.rows:
            self.board.add(row)
        self._form.objects = form


def _labelled(label, widget):
    return pn.Row(html_pane(f'<span class="ro-label">{html.escape(label)}</span>', width=128,
                               margin=(8, 4, 0, 8)), widget, margin=0)
