"""The browser lab: ``create_app`` builds one session, ``serve`` runs ``radorbit lab``.

Every browser session gets its own ``LabState``, widgets and plots (nothing is shared
at module level), and its runs go to their own worker threads, so a long run in one
tab does not hold up another.
"""

import html
import sys
from pathlib import Path

import panel as pn
from panel.viewable import Viewer

from .bundled import DEFAULT_SCENARIO
from .controls import RunControls
from .editors.fields import FieldComposer
from .editors.particle import ParticleEditor
from .editors.run import RunEditor
from .editors.source import ScenarioSource
from .state import LabState
from .theme import HEADER_CSS, PAGE, html_pane, section_card
from .views import prepare_drawing
from .views.beam import BeamNote, BeamView
from .views.export import ExportView
from .views.orbits import OrbitView
from .views.preview import FieldPreview
from .views.series import SeriesView
from .views.summary import SummaryView

TITLE = "radorbit lab"
CAUTION = ("Research and teaching tool: results are not for radiation-safety or shielding decisions; "
           "defer to local regulations and licensed practice.")
SIDEBAR_WIDTH = 480
TAB_FIELDS, TAB_RESULTS, TAB_SPECTRUM = "Fields", "Results", "Spectrum"
TAB_SCAN = "Scan"
TAB_BEAM = "Beam"


class Lab(Viewer):
    """One session's page, with handles on its state and parts (for tests and scripts)."""

    def __init__(self, state, page, tabs, controls, spectrum=None, scan=None):
        super().__init__()
        self.scan = scan
        self.state = state
        self.page = page
        self.tabs = tabs
        self.controls = controls
        self.spectrum = spectrum

    def __panel__(self):
        return self.page


def load_initial(state, initial_scenario_path=None):
    """Load the given scenario file into ``state``, or the default bundled one."""
    if initial_scenario_path is None:
        return state.load_bundled(DEFAULT_SCENARIO)
    path = Path(initial_scenario_path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        state.source_error = f"cannot read {str(path)!r}: {exc.strerror}; opened a bundled scenario instead."
        message = state.source_error
        state.load_bundled(DEFAULT_SCENARIO)
        state.source_error = message
        return False
    return state.load_toml(text, path.name, base_dir=path.resolve().parent)


def spectrum_panel():
    """A new ``SpectrumPanel`` from ``ui.views.spectrum``; None when that module is absent.

    Returns
    -------
    (panel or None, message)
        ``message`` explains a module that exists but failed to load (shown in its tab).
    """
    try:
        from .views.spectrum import SpectrumPanel
    except ModuleNotFoundError as exc:
        if exc.name in ("ui.views.spectrum", __package__ + ".views.spectrum"):
            return None, ""
        return None, f"The spectrum view could not be loaded: {exc}"
    except Exception as exc:  # another helper's module: report, keep the lab working
        return None, f"The spectrum view could not be loaded: {type(exc).__name__}: {exc}"
    try:
        return SpectrumPanel(), ""
    except Exception as exc:
        return None, f"The spectrum view could not start: {type(exc).__name__}: {exc}"


def header_html(state):
    title = state.scenario.title if state.scenario is not None else state.draft.get("title", "")
    return (f'<div class="ro-header"><span class="ro-brand">radorbit<small>lab</small></span>'
            f'<span class="ro-title" id="scenario-title">{html.escape(str(title or "untitled scenario"))}</span>'
            f'<span class="ro-caution" id="caution">{html.escape(CAUTION)}</span></div>')


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

    header = html_pane(header_html(state), stylesheets=[HEADER_CSS], sizing_mode="stretch_width",
                       margin=(6, 6, 4, 6))
    state.param.watch(lambda *_: setattr(header, "object", header_html(state)), ["scenario", "draft"])

    spectrum, spectrum_message = spectrum_panel()
    tabs = pn.Tabs(dynamic=True, sizing_mode="stretch_width", margin=(0, 0, 0, 10))

    def finished():
        if state.comparison is not None and state.status in ("completed", "cancelled", "stopped"):
            tabs.active = 1
            if spectrum is not None:
                try:
                    spectrum.update(state.comparison)
                    spectrum_error.visible = False
                except Exception as exc:  # shown in its tab, never a traceback
                    spectrum_error.object = (f'<div class="ro-error" style="color:#b3261e">The spectrum could not '
                                             f"be computed: {html.escape(type(exc).__name__)}: "
                                             f"{html.escape(str(exc))}</div>")
                    spectrum_error.visible = True

    controls = RunControls(state, on_finished=finished)
    sidebar = pn.Column(
        section_card("Run", controls),
        section_card("Scenario", ScenarioSource(state)),
        section_card("Particle", ParticleEditor(state), BeamNote(state)),
        section_card("Run settings and plan", RunEditor(state)),
        width=SIDEBAR_WIDTH, margin=(0, 0, 0, 6),
    )

    fields_tab = pn.Column(
        section_card("Field components (forms generated from the field registry)", FieldComposer(state)),
        section_card("Field preview", FieldPreview(state)),
        sizing_mode="stretch_width", margin=0,
    )
    plots = pn.Column(sizing_mode="stretch_width", margin=0)

    def build_plots(*_):
        # the eight result figures are made on the first result, which keeps page loads light
        if state.prepared is not None and not plots.objects:
            plots.objects = [
                section_card("Orbit projections (zoom one, the others follow)", OrbitView(state)),
                section_card("Time series", SeriesView(state)),
            ]

    state.param.watch(build_plots, "prepared")
    results_tab = pn.Column(section_card("Summary", SummaryView(state), ExportView(state)), plots,
                            sizing_mode="stretch_width", margin=0)
    from .views.scan import ScanTab

    scan = ScanTab(state, on_open=finished)
    tabs.extend([(TAB_FIELDS, fields_tab), (TAB_RESULTS, results_tab),
                 (TAB_SCAN, section_card("Parameter scan (tracker.sweep)", scan))])
    tabs.param.watch(lambda event: tabs._names[event.new] == TAB_SCAN and scan.view, "active")
    beam_tab = pn.Column(sizing_mode="stretch_width", margin=0)

    def build_beam(*_):
        # built on the first beam result only: single-particle sessions never pay for it
        if state.prepared is not None and state.prepared.get("beam") is not None and not beam_tab.objects:
            beam_tab.objects = [section_card("Beam (damped drawn over undamped)", BeamView(state))]

    state.param.watch(build_beam, "prepared")
    tabs.append((TAB_BEAM, beam_tab))
    spectrum_error = html_pane("", visible=False, sizing_mode="stretch_width")
    if spectrum is not None:
        tabs.append((TAB_SPECTRUM, pn.Column(spectrum_error, spectrum, sizing_mode="stretch_width")))
    elif spectrum_message:
        tabs.append((TAB_SPECTRUM, html_pane(f'<div class="ro-note">{html.escape(spectrum_message)}</div>')))


    if pn.state.curdoc is not None:
        # a closed tab stops its run at the next chunk instead of computing for nobody
        pn.state.on_session_destroyed(lambda _context: state.cancel_run())
        pn.state.on_session_destroyed(lambda _context: scan.cancel())

    page = pn.Column(header, pn.Row(sidebar, tabs, sizing_mode="stretch_width", margin=0),
                     sizing_mode="stretch_width", styles={"background": PAGE}, margin=0)
    return Lab(state=state, page=page, tabs=tabs, controls=controls, spectrum=spectrum, scan=scan)


def websocket_origins(address, port):
    """Origins allowed to open the lab's websocket for a bind address."""
    hosts = {address}
    if address in ("127.0.0.1", "localhost", "::1"):
        hosts |= {"127.0.0.1", "localhost"}
    elif address in ("0.0.0.0", "::", ""):
        import socket

        hosts = {"127.0.0.1", "localhost", socket.gethostname(), socket.getfqdn()}
    return sorted(f"{h}:{port}" for h in hosts if h)


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


def serve(scenario_path=None, port=5006, address="127.0.0.1", show=False):
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
    """
    if scenario_path is not None and not Path(scenario_path).is_file():
        print(f"radorbit: error: cannot read scenario file {str(scenario_path)!r}", file=sys.stderr)
        return 2
    url = f"http://{'127.0.0.1' if address in ('0.0.0.0', '::') else address}:{port}/"
    problem = port_problem(address, port)
    if problem:
        print(f"radorbit: error: {problem}", file=sys.stderr)
        return 1
    if show:
        problem = browser_problem()
        if problem:
            print(f"radorbit lab: cannot open a browser ({problem}); open {url} yourself", file=sys.stderr)
            show = False
    print(f"radorbit lab: serving on {url} (Ctrl-C stops)", flush=True)
    pn.serve(lambda: create_app(scenario_path), port=port, address=address, show=show, title=TITLE,
             websocket_origin=websocket_origins(address, port), verbose=False, threaded=False)
    return 0
