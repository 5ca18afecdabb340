"""Scenario source: open a bundled scenario, upload a TOML file, download the current one."""

import html
import io
from pathlib import Path

import panel as pn
from panel.viewable import Viewer

from ..bundled import bundled_scenarios
from ..state import MAX_SCENARIO_BYTES
from ..theme import html_pane

#: uploads above this are refused in the browser, before they travel (the file picker says so)
MAX_UPLOAD = f"{MAX_SCENARIO_BYTES // 1000}KB"


def scenario_stem(source):
    """File stem for downloads from the draft's source ('scenario' when unknown)."""
    name = source.split(":", 1)[-1].strip() if source else ""
    return Path(name).stem or "scenario"


class ScenarioSource(Viewer):
    """Bundled scenarios, upload, download as TOML (SI, round-trips through Scenario.from_toml)."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self._syncing = False
        options = {f"{title} ({name})": name for name, title in bundled_scenarios().items()}
        self.bundled = pn.widgets.Select(options=options, sizing_mode="stretch_width", margin=(4, 4),
                                         css_classes=["bundled-select"])
        if state.source in options.values():
            self.bundled.value = state.source
        self.open = pn.widgets.Button(label="Open", width=80, margin=(4, 4), css_classes=["open-bundled"])
        self.open.on_click(lambda _e: self.state.load_bundled(self.bundled.value))
        # the dropper checks the size in the browser and sends in chunks: a huge file gets a message
        # instead of overflowing the session's websocket (which would end the session)
        self.upload = pn.widgets.FileDropper(multiple=False, max_file_size=MAX_UPLOAD, layout="compact",
                                             margin=(4, 4), width=300, height=70, css_classes=["upload-scenario"])
        self.upload.param.watch(self._uploaded, "value")
        self.download = pn.widgets.FileDownload(callback=self._toml_file, filename="scenario.toml",
                                                label="Download scenario (.toml)", width=300, margin=(4, 4),
                                                css_classes=["download-scenario"])
        self.title = pn.widgets.TextInput(placeholder="title (optional)", sizing_mode="stretch_width",
                                          margin=(4, 4), css_classes=["in-title"])
        self.description = pn.widgets.TextAreaInput(placeholder="description (optional)", height=70,
                                                    sizing_mode="stretch_width", margin=(4, 4),
                                                    css_classes=["in-description"])
        self.title.param.watch(lambda e: self._text_changed("title", e.new), "value")
        self.description.param.watch(lambda e: self._text_changed("description", e.new), "value")
        self.message = html_pane("", sizing_mode="stretch_width", margin=(0, 8))
        state.param.watch(self._reloaded, "layout_version")
        state.param.watch(self._show_message, ["source", "source_error", "scenario", "loads"])
        self._reloaded()
        self._show_message()
        self._layout = pn.Column(
            pn.Row(self.bundled, self.open, margin=0),
            pn.Row(html_pane('<span class="ro-label">or upload</span>', width=70, margin=(10, 4, 0, 8)),
                   self.upload, margin=0),
            self.message,
            self.title,
            self.description,
            self.download,
            sizing_mode="stretch_width", margin=0,
        )

    def __panel__(self):
        return self._layout

    def _uploaded(self, event):
        if not event.new:
            return
        name, content = next(reversed(event.new.items()))
        if isinstance(content, bytes):
            try:
                content = content.decode("utf-8")
            except UnicodeDecodeError:
                self.state.source_error = f"{name}: not a UTF-8 text file; nothing was loaded."
                return
        self.state.load_toml(content, f"upload: {name}")

    def _text_changed(self, key, text):
        if self._syncing:
            return
        self.state.set_value((key,), text.strip() or None)

    def _reloaded(self, *_):
        self._syncing = True
        try:
            self.title.value = str(self.state.draft.get("title", "") or "")
            self.description.value = str(self.state.draft.get("description", "") or "")
        finally:
            self._syncing = False
        self.download.filename = f"{scenario_stem(self.state.source)}.toml"

    def _show_message(self, *_):
        state = self.state
        self.download.disabled = state.scenario is None
        if state.source_error:
            text = (f'<div class="ro-error" id="source-error" style="color:#b3261e">'
                    f"{html.escape(state.source_error)}</div>")
        else:
            text = (f'<div class="ro-note" id="source-name" data-loads="{state.loads}">'
                    f'editing: {html.escape(state.source or "new scenario")}</div>')
        self.message.object = text

    def _toml_file(self):
        text = self.state.toml_text()
        if text is None:
            return None
        return io.BytesIO(text.encode("utf-8"))
