"""The lab's main area: tabs whose content is built the first time they are shown.

A session pays only for what its user opens: the Results figures are made when the
first result arrives (or the tab is opened), the Spectrum view when its tab is. A new
view (a Beam or a Scan view) is one more ``TabSpec`` in ``ui.app.TABS``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import panel as pn
from panel.viewable import Viewer


@dataclass(frozen=True)
class TabSpec:
    """One tab: its title and how to build its content for a session.

    ``build(context)`` gets the session's ``ui.app.LabContext`` (state, link) and returns
    a viewable; it runs once per session, the first time the tab is shown.
    """

    title: str
    build: Callable


class LazyTabs(Viewer):
    """``pn.Tabs`` whose panels are empty placeholders until first shown."""

    def __init__(self, specs, context, **params):
        super().__init__(**params)
        self.specs = list(specs)
        self.context = context
        self.built: dict[str, object] = {}
        self._holders = [pn.Column(sizing_mode="stretch_width", margin=0) for _ in self.specs]
        self.tabs = pn.Tabs(*[(spec.title, holder) for spec, holder in zip(self.specs, self._holders)],
                            dynamic=True, sizing_mode="stretch_width", margin=(0, 0, 0, 10))
        self.tabs.param.watch(lambda event: self.build(event.new), "active")
        if self.specs:
            self.build(0)

    def __panel__(self):
        return self.tabs

    @property
    def titles(self) -> list[str]:
        return [spec.title for spec in self.specs]

    def index(self, title: str) -> int:
        return self.titles.index(title)

    def build(self, index: int):
        """The content of tab ``index``, built now if it was not yet."""
        spec = self.specs[index]
        if spec.title not in self.built:
            view = spec.build(self.context)
            self.built[spec.title] = view
            self._holders[index].objects = [view]
        return self.built[spec.title]

    def show(self, title: str):
        """Build (if needed) and select the tab called ``title``; returns its content."""
        index = self.index(title)
        view = self.build(index)
        self.tabs.active = index
        return view
