"""The browser lab: ``create_app`` builds one session, ``serve`` runs ``radorbit lab``.

Every browser session gets its own ``LabState``, widgets and plots (nothing is shared
at module level), and its runs go to their own worker threads, so a long run in one
tab does not hold up another.
"""

import html
import sys
from dataclasses import dataclass, field
from pathlib import Path

import panel as pn
from panel.viewable import Viewer

from .bundled import DEFAULT_SCENARIO
from .controls import RunControls
from .editors.fields import FieldComposer
from .editors.particle import ParticleEditor
from .editors.run import RunEditor
from .editors.source import ScenarioSource
from .session import SessionLink
from .state import LabState
from .tabs import LazyTabs, TabSpec
from .theme import HEADER_CSS, PAGE, html_pane, section_card
from .views import prepare_drawing
from .views.beam import BeamView
from .views.export import ExportView
from .views.orbits import OrbitView
from .views.photons import PhotonView
from .views.preview import FieldPreview
from .views.series import SeriesView
from .views.spectrum import SpectrumPanel
from .views.summary import SummaryView

TITLE = "radorbit lab"
CAUTION = ("Research and teaching tool: results are not for radiation-safety or shielding decisions; "
           "defer to local regulations and licensed practice.")
SIDEBAR_WIDTH = 480
TAB_FIELDS, TAB_RESULTS, TAB_SPECTRUM = "Fields", "Results", "Spectrum"
TAB_SCAN = "Scan"
TAB_BEAM = "Beam"
TAB_PHOTONS = "Photons"


@dataclass
class LabContext:
    """What a tab's builder gets: the session's state and its link to the page's event loop."""

    state: LabState
    link: SessionLink
    views: dict = field(default_factory=dict)  #: views by name, once built (for tests and scripts)
    show_results: object = None  #: callable() that brings the Results tab forward (set by create_app)


class Lab(Viewer):
    """One session's page, with handles on its state and parts (for tests and scripts)."""

    def __init__(self, state, page, tabs, controls, link):
        super().__init__()
        self.state = state
        self.page = page
        self.tabs = tabs
        self.controls = controls
        self.link = link

    @property
    def spectrum(self):
        """The Spectrum view (built on first use)."""
        return self.tabs.build(self.tabs.index(TAB_SPECTRUM))

    @property
    def scan(self):
        """The Scan tab's content (built on first use)."""
        self.tabs.build(self.tabs.index(TAB_SCAN))
        return self.tabs.context.views["scan"]

    def __panel__(self):
        return self.page


def load_initial(state, initial_scenario_path=None):
    """Load the given scenario file into ``state``, or the default bundled one."""
    if initial_scenario_path is None:
        return state.load_bundled(DEFAULT_SCENARIO)
    path = Path(initial_scenario_path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) else "not a UTF-8 text file"
        state.load_bundled(DEFAULT_SCENARIO)
        state.source_error = f"cannot read {str(path)!r}: {reason}; opened a bundled scenario instead."
        return False
    return state.load_toml(text, path.name, base_dir=path.resolve().parent)


def header_html(state):
    title = state.scenario.title if state.scenario is not None else state.draft.get("title", "")
    return (f'<div class="ro-header"><span class="ro-brand">radorbit<small>lab</small></span>'
            f'<span class="ro-title" id="scenario-title">{html.escape(str(title or "untitled scenario"))}</span>'
            f'<span class="ro-caution" id="caution">{html.escape(CAUTION)}</span></div>')


def fields_tab(context):
    preview = pn.Column(html_pane('<div class="ro-note" id="preview-pending">drawing the field preview…</div>'),
                        sizing_mode="stretch_width", margin=0)

    def build_preview():
        preview.objects = [FieldPreview(context.state)]

    doc = pn.state.curdoc
    if doc is not None and doc.session_context is not None:
        # the preview's figures are half of a session's build: made once the page is up, so a page
        # load returns sooner (and the server sooner turns to other requests)
        pn.state.onload(build_preview)
    else:
        build_preview()
    return pn.Column(
        section_card("Field components (forms generated from the field registry)", FieldComposer(context.state)),
        section_card("Field preview", preview),
        sizing_mode="stretch_width", margin=0,
    )


def results_tab(context):
    state = context.state
    plots = pn.Column(sizing_mode="stretch_width", margin=0)

    def build_plots(*_):
        # the result figures are made when the first run starts (while it computes), which keeps
        # page loads light and takes their making off the path from the run's end to its plots
        if (state.prepared is not None or state.status in ("queued", "running")) and not plots.objects:
            context.views.update(orbits=OrbitView(state), series=SeriesView(state))
            plots.objects = [
                section_card("Orbit projections (zoom one, the others follow)", context.views["orbits"]),
                section_card("Time series", context.views["series"]),
            ]

    state.param.watch(build_plots, ["prepared", "status"])
    build_plots()
    return pn.Column(section_card("Summary", SummaryView(state), ExportView(state)), plots,
                     sizing_mode="stretch_width", margin=0)


def spectrum_tab(context):
    return SpectrumPanel(context.state, context.link)


#: the main area's tabs, in order; a new view is one more entry (built lazily per session)
def scan_tab(context):
    from .views.scan import ScanTab

    scan = context.views["scan"] = ScanTab(context.state, on_open=context.show_results)
    context.link.on_gone(scan.cancel)
    scan.view  # noqa: B018 -- the tab is being shown: build its content now
    return section_card("Parameter scan (tracker.sweep)", scan)


def beam_tab(context):
    # a [beam] run's heat map, statistics and orbits; says what to do before a beam has run
    beam = context.views["beam"] = BeamView(context.state)
    return section_card("Beam (every model run; no reaction force drawn underneath)", beam)


def photons_tab(context):
    # the photons a stochastic-emission run recorded; says how to get some before one has run
    photons = context.views["photons"] = PhotonView(context.state)
    return section_card("Photons (stochastic emission)", photons)


TABS = [TabSpec(TAB_FIELDS, fields_tab), TabSpec(TAB_RESULTS, results_tab), TabSpec(TAB_SCAN, scan_tab),
        TabSpec(TAB_SPECTRUM, spectrum_tab), TabSpec(TAB_BEAM, beam_tab), TabSpec(TAB_PHOTONS, photons_tab)]


def create_app(initial_scenario_path=None):
    """Build one lab session (call once per browser session).

    Parameters
    ----------
    initial_scenario_path : str or Path, optional
        Scenario TOML to open; default: a bundled scenario.

    Returns
    -------
    Lab
        The page (a Viewer) with the session's ``state`` and main parts.
    """
    state = LabState(prepare=prepare_drawing)
    load_initial(state, initial_scenario_path)
    link = SessionLink()
    link.on_gone(state.cancel_run)

    header = html_pane(header_html(state), stylesheets=[HEADER_CSS], sizing_mode="stretch_width",
                       margin=(6, 6, 4, 6))
    state.param.watch(lambda *_: setattr(header, "object", header_html(state)), ["scenario", "draft"])

    context = LabContext(state, link)
    tabs = LazyTabs(TABS, context)

    def finished():
        if state.comparison is not None and state.status in ("completed", "cancelled", "stopped"):
            tabs.show(TAB_RESULTS)

    context.show_results = finished

    controls = RunControls(state, link=link, on_finished=finished,
                           on_started=lambda: tabs.build(tabs.index(TAB_RESULTS)))
    sidebar = pn.Column(
        section_card("Run", controls),
        section_card("Scenario", ScenarioSource(state)),
        section_card("Particle or beam", ParticleEditor(state)),
        section_card("Run settings and plan", RunEditor(state)),
        width=SIDEBAR_WIDTH, margin=(0, 0, 0, 6),
    )

    if pn.state.curdoc is not None and pn.state.curdoc.session_context is not None:
        # the session's end (Bokeh drops it a few seconds after its tab closed) also stops its work;
        # the link stops it sooner, as soon as it sees the tab gone
        pn.state.on_session_destroyed(lambda _context: link.cancel_all())

    page = pn.Column(header, pn.Row(sidebar, tabs, sizing_mode="stretch_width", margin=0),
                     sizing_mode="stretch_width", styles={"background": PAGE}, margin=0)
    return Lab(state=state, page=page, tabs=tabs, controls=controls, link=link)


def port_problem(address, port):
    """'' when ``address:port`` can be bound, else one line saying why (checked before serving,
    so that a busy port gives one clear error instead of a traceback after "serving on")."""
    import errno
    import socket

    if not 0 < int(port) < 65536:
        return f"--port {port} is not a TCP port (1-65535)"
    try:
        infos = socket.getaddrinfo(address or None, port, type=socket.SOCK_STREAM, flags=socket.AI_PASSIVE)
    except socket.gaierror as exc:
        return f"--address {address!r} cannot be resolved ({exc.strerror})"
    family, kind, proto, _, where = infos[0]
    with socket.socket(family, kind, proto) as probe:
        # the server sets SO_REUSEADDR too: a port left in TIME_WAIT is not "in use"
        probe.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        try:
            probe.bind(where)
        except OSError as exc:
            if exc.errno == errno.EADDRINUSE:
                return (f"port {port} on {address} is already in use (another lab or server?); "
                        "choose another with --port")
            return f"cannot listen on {address}:{port} ({exc.strerror})"
    return ""


def browser_problem():
    """'' when a browser can be opened from here, else why not (``--show``)."""
    import os
    import webbrowser

    if sys.platform.startswith("linux") and not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
        return "no display: DISPLAY and WAYLAND_DISPLAY are unset"
    try:
        webbrowser.get()
    except webbrowser.Error:
        return "no browser found"
    return ""


def serve(scenario_path=None, port=5006, address="127.0.0.1", show=False, allow_hosts=()):
    """Serve the lab until interrupted (the ``radorbit lab`` command).

    Parameters
    ----------
    scenario_path : str or Path, optional
        Scenario TOML each new session opens; default: a bundled scenario.
    port : int
    address : str
        Address to bind; loopback by default (the lab has no authentication).
    show : bool
        Open a browser tab.
    allow_hosts : iterable of str
        Host names to answer to besides the loopback names and ``address`` (``ui.server``).
    """
    from .server import LabServer

    if scenario_path is not None and not Path(scenario_path).is_file():
        print(f"radorbit: error: cannot read scenario file {str(scenario_path)!r}", file=sys.stderr)
        return 2
    problem = port_problem(address, port)
    if problem:
        print(f"radorbit: error: {problem}", file=sys.stderr)
        return 1
    server = LabServer(lambda: create_app(scenario_path), port=port, address=address, allow_hosts=allow_hosts,
                       title=TITLE)
    if show:
        problem = browser_problem()
        if problem:
            print(f"radorbit lab: cannot open a browser ({problem}); open {server.url} yourself", file=sys.stderr)
            show = False
    print(f"radorbit lab: serving on {server.url} (Ctrl-C stops); answering to host names "
          f"{', '.join(sorted(server.hosts))}", flush=True)
    server.run(show=show)
    return 0
