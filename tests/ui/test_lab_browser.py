"""The lab in a real headless Chromium: edit, run, compare with the engine, errors, cancel, sessions."""

import math
import re
import subprocess
import sys
import tomllib

import pytest

import tracker
from tracker import Scenario, constants
from ui.bundled import bundled_path, bundled_scenarios
from ui.format import ENERGY_DIGITS, ENERGY_UNITS, energy_text

from lab_helpers import ROOT, free_port, stop_server, wait_for_http

pytestmark = pytest.mark.browser

RING = "storage_ring_bend.toml"
LASER = "laser_headon_gev.toml"
RUN_TIMEOUT = 90_000  # ms; a fresh CI machine compiles the kernels on the first run


def expect(locator):
    from playwright.sync_api import expect as _expect

    return _expect(locator)


def open_lab(page, url, errors=None):
    if errors is not None:
        page.on("pageerror", lambda exc: errors.append(str(exc)))
    page.goto(url)
    expect(page.locator(".run-button button")).to_be_enabled(timeout=60_000)


def open_bundled(page, name):
    """Open a bundled scenario and wait until its forms are rebuilt."""
    loads = int(page.locator("#source-name").get_attribute("data-loads"))
    label = f"{bundled_scenarios()[name]} ({name})"
    page.locator(".bundled-select select").select_option(label=label)
    page.locator(".open-bundled button").click()
    expect(page.locator(f'#source-name[data-loads="{loads + 1}"]')).to_contain_text(name)
    expect(page.locator("#scenario-title")).to_have_text(bundled_scenarios()[name])


def type_into(page, css, text):
    box = page.locator(f"{css} input")
    box.fill(text)
    box.press("Enter")


def paint(page):
    """Return once the browser has painted twice since now (canvases drawn before a screenshot)."""
    page.evaluate("() => new Promise(r => requestAnimationFrame(() => requestAnimationFrame(r)))")


def run_and_wait(page, status="completed", runs=1):
    page.locator(".run-button button").click()
    done = page.locator(f'#run-status[data-status="{status}"][data-runs="{runs}"]')
    expect(done).to_be_visible(timeout=RUN_TIMEOUT)


def joules(text):
    """Energy in J from the page's 'number eV-multiple' text."""
    value, unit = text.split()
    return float(value) * dict(ENERGY_UNITS)[unit] * constants.e


def displayed_tolerance(text):
    """Half a unit in the last of the ENERGY_DIGITS significant digits of a shown energy, in J."""
    value, unit = text.split()
    exponent = math.floor(math.log10(abs(float(value)))) if float(value) else 0
    return 0.5 * 10.0 ** (exponent - (ENERGY_DIGITS - 1)) * dict(ENERGY_UNITS)[unit] * constants.e


def edited(name, change):
    """The bundled scenario ``name`` with ``change(data)`` applied to its raw dict."""
    data = tomllib.loads(bundled_path(name).read_text(encoding="utf-8"))
    change(data)
    return Scenario.from_dict(data)


def test_edit_run_and_compare_with_the_engine(page, lab_url, artifacts, tmp_path):
    errors = []
    open_lab(page, lab_url, errors)
    open_bundled(page, LASER)
    type_into(page, ".in-field-0-a0", "15")
    scenario = edited(LASER, lambda d: d["field"][0].update(a0=15))
    expect(page.locator("#scenario-ok")).to_be_visible()
    run_and_wait(page)

    expected = tracker.compare(scenario)
    unedited = tracker.compare(edited(LASER, lambda d: None))
    for name, model in (("damped", "landau-lifshitz"), ("undamped", "none")):  # the scenario's model and none
        cell = page.locator(f"#sum-energy_radiated-{model}")
        want = getattr(expected, name).summary()["energy_radiated"]
        expect(cell).to_have_text(energy_text(want))
        shown = energy_text(want)  # what the page shows (checked just above; re-reading races a redraw)
        # independent of the formatter: equal to the displayed precision (6 significant digits)
        assert abs(joules(shown) - want) <= displayed_tolerance(shown)
        assert shown != energy_text(getattr(unedited, name).summary()["energy_radiated"])
    expect(page.locator(".ro-badge.complete").first).to_be_visible()

    # the exported file is the engine's full result
    with page.expect_download() as info:
        page.locator(".download-landau-lifshitz-h5 button").click()
    info.value.save_as(tmp_path / "damped.h5")
    saved = tracker.load_result(tmp_path / "damped.h5")
    assert saved.summary()["energy_radiated"] == expected.damped.summary()["energy_radiated"]
    assert len(saved.t) == len(expected.damped.t)

    page.wait_for_function(
        "() => { for (const d of Bokeh.documents) for (const m of d.all_models)"
        " if (m.data && m.data.gamma && m.data.gamma.length > 10) return true; return false; }")
    paint(page)
    page.screenshot(path=str(artifacts / "lab-results.png"), full_page=True)
    page.locator(".bk-tab", has_text="Fields").click()
    expect(page.locator(".in-field-0-a0 input")).to_be_visible()
    paint(page)
    page.screenshot(path=str(artifacts / "lab-fields.png"), full_page=True)
    assert errors == []


def test_invalid_entry_shows_the_message_and_the_lab_keeps_working(page, lab_url):
    errors = []
    open_lab(page, lab_url, errors)
    open_bundled(page, RING)
    type_into(page, ".in-field-0-B-2", "abc")
    message = page.locator("#err-field-0-B")
    expect(message).to_be_visible()
    expect(message).to_contain_text("field[0].B[2]: cannot read 'abc'")
    expect(page.locator("#scenario-error")).to_contain_text("field[0].B[2]")
    expect(page.locator(".run-button button")).to_be_disabled()
    expect(page.locator("#plan-readout")).to_contain_text("No plan")
    assert "Traceback" not in page.content()

    type_into(page, ".in-field-0-B-2", "1.2 T")
    expect(page.locator("#err-field-0-B")).to_have_count(0)
    scenario = edited(RING, lambda d: d["field"][0]["B"].__setitem__(2, "1.2 T"))
    expect(page.locator("#plan-steps")).to_have_text(f"{scenario.plan().steps:,}")
    run_and_wait(page)
    want = tracker.compare(scenario).damped.summary()["energy_radiated"]
    expect(page.locator("#sum-energy_radiated-landau-lifshitz")).to_have_text(energy_text(want))
    assert errors == []


def test_upload_and_download_of_scenario_files(page, lab_url, tmp_path):
    open_lab(page, lab_url)
    upload = tmp_path / "my_mirror.toml"
    upload.write_text(bundled_path("mirror_trap.toml").read_text(encoding="utf-8"), encoding="utf-8")
    page.locator(".upload-scenario input[type=file]").set_input_files(str(upload))
    expect(page.locator("#source-name")).to_contain_text("my_mirror.toml")
    type_into(page, ".in-field-0-B0", "4 T")
    expect(page.locator("#scenario-ok")).to_be_visible()
    with page.expect_download() as info:
        page.locator(".download-scenario button").click()
    download = info.value
    assert download.suggested_filename == "my_mirror.toml"
    text = (tmp_path / "down.toml")
    download.save_as(text)
    got = Scenario.from_toml(text.read_text(encoding="utf-8"))
    data = tomllib.loads(upload.read_text(encoding="utf-8"))
    data["field"][0]["B0"] = "4 T"
    assert got.to_dict() == Scenario.from_dict(data).to_dict()


def test_cancel_stops_a_long_run_and_keeps_a_marked_partial_result(page, lab_url):
    open_lab(page, lab_url)
    open_bundled(page, RING)
    type_into(page, ".in-run-duration", "7 ms")
    type_into(page, ".in-run-save_every", "100000")
    expect(page.locator("#plan-steps")).to_have_text(re.compile(r"^\d{2},\d{3},\d{3}$"))
    page.locator(".run-button button").click()
    expect(page.locator("#run-status")).to_contain_text("% of the planned steps", timeout=RUN_TIMEOUT)
    page.locator(".cancel-button button").click()
    expect(page.locator('#run-status[data-status="cancelled"]')).to_be_visible(timeout=RUN_TIMEOUT)
    expect(page.locator("#run-status")).to_contain_text("partial")
    expect(page.locator("#partial-landau-lifshitz")).to_contain_text("cancelled")
    expect(page.locator("#partial-none")).to_be_visible()
    steps = int(page.locator("#sum-steps-landau-lifshitz").inner_text().replace(",", ""))
    planned = int(page.locator("#plan-steps").inner_text().replace(",", ""))
    assert 0 < steps < planned
    expect(page.locator(".run-button button")).to_be_enabled()


def test_two_sessions_run_side_by_side(browser, lab_url):
    contexts = [browser.new_context(viewport={"width": 1400, "height": 900}) for _ in range(2)]
    try:
        slow, quick = (c.new_page() for c in contexts)
        open_lab(slow, lab_url)
        open_lab(quick, lab_url)
        open_bundled(slow, RING)
        type_into(slow, ".in-run-duration", "7 ms")
        type_into(slow, ".in-run-save_every", "100000")
        slow.locator(".run-button button").click()
        expect(slow.locator('#run-status[data-status="running"]')).to_be_visible()

        # the other session edits, plans and runs while the long run goes on
        type_into(quick, ".in-field-0-a0", "12")
        data = tomllib.loads(bundled_path(LASER).read_text(encoding="utf-8"))
        data["field"][0]["a0"] = 12
        scenario = Scenario.from_dict(data)
        expect(quick.locator("#plan-steps")).to_have_text(f"{scenario.plan().steps:,}")
        run_and_wait(quick)
        want = tracker.compare(scenario).damped.summary()["energy_radiated"]
        expect(quick.locator("#sum-energy_radiated-landau-lifshitz")).to_have_text(energy_text(want))
        expect(slow.locator('#run-status[data-status="running"]')).to_be_visible()

        # and their scenarios stayed apart
        expect(slow.locator("#scenario-title")).to_have_text(bundled_scenarios()[RING])
        expect(quick.locator("#scenario-title")).to_have_text(bundled_scenarios()[LASER])
        slow.locator(".cancel-button button").click()
        expect(slow.locator('#run-status[data-status="cancelled"]')).to_be_visible(timeout=RUN_TIMEOUT)
    finally:
        for c in contexts:
            c.close()


def test_the_radorbit_lab_command_serves_the_lab(page, tmp_path):
    port = free_port()
    log = open(tmp_path / "lab.log", "w")
    proc = subprocess.Popen([sys.executable, "-m", "tracker", "lab", str(bundled_path(RING)), "--port", str(port)],
                            stdout=log, stderr=subprocess.STDOUT, cwd=ROOT)
    try:
        wait_for_http(f"http://127.0.0.1:{port}/", process=proc)
        open_lab(page, f"http://127.0.0.1:{port}/")
        expect(page.locator("#scenario-title")).to_have_text(bundled_scenarios()[RING])
        expect(page.locator("#caution")).to_contain_text("not for radiation-safety or shielding decisions")
    finally:
        stop_server(proc)
        log.close()



def test_three_bad_values_give_three_messages(page, lab_url):
    open_lab(page, lab_url)
    open_bundled(page, LASER)
    type_into(page, ".in-run-duration", "3 parsec")
    type_into(page, ".in-field-0-wavelength", "-0.8 um")
    type_into(page, ".in-particle-kinetic_energy", "abc")
    expect(page.locator("#err-run-duration")).to_contain_text("wrong dimension")
    expect(page.locator("#err-field-0-wavelength")).to_contain_text("must be positive")
    expect(page.locator("#err-particle-kinetic_energy")).to_contain_text("abc")
    expect(page.locator('#scenario-error[data-count="3"]')).to_be_visible()
    expect(page.locator(".run-button button")).to_be_disabled()


def test_downloaded_scenario_keeps_the_text_as_entered(page, lab_url, tmp_path):
    open_lab(page, lab_url)
    open_bundled(page, LASER)
    type_into(page, ".in-run-duration", "130 fs")
    expect(page.locator("#scenario-ok")).to_be_visible()
    with page.expect_download() as info:
        page.locator(".download-scenario button").click()
    path = tmp_path / "laser.toml"
    info.value.save_as(path)
    text = path.read_text(encoding="utf-8")
    assert 'duration = "130 fs"' in text and 'duration = "25 fs"' in text and 'kinetic_energy = "1 GeV"' in text
    want = edited(LASER, lambda d: d["run"].update(duration="130 fs"))
    assert Scenario.from_toml(text).to_dict() == want.to_dict()  # the round trip stays exact


@pytest.mark.parametrize("width, height", [(1280, 720), (1920, 1080)])
def test_the_page_has_no_horizontal_scroll(browser, lab_url, width, height):
    context = browser.new_context(viewport={"width": width, "height": height})
    try:
        page = context.new_page()
        open_lab(page, lab_url)
        open_bundled(page, RING)
        run_and_wait(page)
        expect(page.locator(".orbit-equal")).to_be_visible()
        paint(page)
        scroll = page.evaluate("() => document.documentElement.scrollWidth")
        assert scroll <= width, f"page is {scroll} px wide at a {width} px viewport"
    finally:
        context.close()


def test_equal_scales_draw_a_circle_round(page, lab_url):
    open_lab(page, lab_url)
    open_bundled(page, RING)
    run_and_wait(page)
    expect(page.locator(".orbit-equal input")).to_be_checked()
    # pixels per unit length along x and y of the x-y projection, from Bokeh's own frame geometry
    ratio = page.wait_for_function("""() => {
        const views = [];
        const walk = v => { views.push(v); for (const c of (v.child_views || [])) walk(c); };
        for (const root of Bokeh.index.roots) walk(root);
        for (const view of views) {
            const m = view.model;
            if (!m.title || !m.title.text || !m.title.text.includes('x-y projection')) continue;
            const f = view.frame;
            if (!f || !f.bbox || f.bbox.width < 10) continue;
            const px = f.bbox.width / (m.x_range.end - m.x_range.start);
            const py = f.bbox.height / (m.y_range.end - m.y_range.start);
            return px / py;
        }
        return null;
    }""").json_value()
    assert abs(ratio - 1.0) < 0.01


def click_on_words(page, text):
    """A mouse click where the words are drawn, as a person would click them."""
    words = page.get_by_text(text)
    words.scroll_into_view_if_needed()
    box = words.bounding_box()
    page.mouse.click(box["x"] + box["width"] / 2, box["y"] + box["height"] / 2)


def test_a_click_on_a_switch_label_toggles_it(page, lab_url):
    open_lab(page, lab_url)
    open_bundled(page, RING)
    run_and_wait(page)
    box = page.locator(".log-power input")
    expect(box).not_to_be_checked()
    click_on_words(page, "log scale for the Liénard power P(t)")
    expect(box).to_be_checked()
    equal = page.locator(".orbit-equal input")
    before = equal.is_checked()
    click_on_words(page, "same scale on all axes")
    expect(equal).to_be_checked(checked=not before)


def test_an_oversize_upload_gets_a_message_and_the_session_keeps_working(page, lab_url, tmp_path):
    open_lab(page, lab_url)
    big = tmp_path / "huge.toml"
    big.write_text("title = '" + "x" * 3_000_000 + "'\n", encoding="utf-8")
    page.locator(".upload-scenario input[type=file]").set_input_files(str(big))
    expect(page.get_by_text("File is too large").first).to_be_visible()
    type_into(page, ".in-field-0-a0", "13")  # the session still answers
    scenario = edited(LASER, lambda d: d["field"][0].update(a0=13))
    expect(page.locator("#plan-steps")).to_have_text(f"{scenario.plan().steps:,}")


def test_a_deeply_nested_upload_gets_a_message(page, lab_url, tmp_path):
    open_lab(page, lab_url)
    deep = tmp_path / "deep.toml"
    deep.write_text("x = " + "[" * 500 + "]" * 500 + "\n", encoding="utf-8")
    page.locator(".upload-scenario input[type=file]").set_input_files(str(deep))
    expect(page.locator("#source-error")).to_contain_text("nested", timeout=30_000)
    expect(page.locator(".run-button button")).to_be_enabled()


def test_a_page_load_never_shows_another_visitors_edits(browser, lab_url):
    # page loads are served from an untouched template session (ui.server): a second visitor
    # sees the bundled scenario, not what the first one typed
    contexts = [browser.new_context(viewport={"width": 1400, "height": 900}) for _ in range(2)]
    try:
        first, second = (c.new_page() for c in contexts)
        open_lab(first, lab_url)
        type_into(first, ".in-title", "first visitor's private title")
        expect(first.locator("#scenario-title")).to_have_text("first visitor's private title")
        open_lab(second, lab_url)
        expect(second.locator("#scenario-title")).to_have_text(bundled_scenarios()[LASER])
        assert "private title" not in second.content()
    finally:
        for c in contexts:
            c.close()


def test_ticked_models_run_side_by_side_and_photons_are_shown(page, lab_url, artifacts):
    errors = []
    open_lab(page, lab_url, errors)
    open_bundled(page, LASER)
    ticks = {model: page.locator(f".model-{model} input") for model in tracker.engine.MODEL_ORDER}
    expect(ticks["none"]).to_be_checked()
    expect(ticks["landau-lifshitz"]).to_be_checked()
    expect(ticks["quantum-stochastic"]).not_to_be_checked()
    click_tick(page, "quantum-stochastic")
    click_tick(page, "landau-lifshitz-quantum")
    expect(page.locator("#scenario-ok")).to_contain_text("4 models")
    run_and_wait(page)

    expected = tracker.compare(edited(LASER, lambda d: None), models=list(tracker.engine.MODEL_ORDER))
    for model in tracker.engine.MODEL_ORDER:
        want = expected[model].summary()["energy_radiated"]
        expect(page.locator(f"#sum-energy_radiated-{model}")).to_have_text(energy_text(want))
    # the stochastic run's photons, as many as the engine records with the same seed
    page.locator(".bk-tab", has_text="Photons").click()
    count = len(expected["quantum-stochastic"].photons)
    expect(page.locator("#photon-count-quantum-stochastic")).to_contain_text(f"{count:,} (")
    page.wait_for_function(
        "() => { for (const d of Bokeh.documents) for (const m of d.all_models)"
        " if (m.data && m.data.low && m.data.low.length > 0) return true; return false; }")
    paint(page)
    page.screenshot(path=str(artifacts / "lab-photons.png"), full_page=True)
    # unticking every model leaves nothing to run, and says so
    for model in tracker.engine.MODEL_ORDER:
        if ticks[model].is_checked():
            click_tick(page, model)
    expect(page.locator("#no-model")).to_be_visible()
    expect(page.locator(".run-button button")).to_be_disabled()
    assert errors == []


#: the words of each model's tick (ui.views.palette.MODEL_LABELS)
MODEL_WORDS = {"none": "no reaction force", "landau-lifshitz": "Landau–Lifshitz",
               "landau-lifshitz-quantum": "quantum-corrected LL", "quantum-stochastic": "stochastic emission"}


def click_tick(page, model):
    """A mouse click on the words of a model's tick."""
    words = page.locator(f".model-{model}").get_by_text(MODEL_WORDS[model], exact=True)
    box = words.bounding_box()
    page.mouse.click(box["x"] + box["width"] / 2, box["y"] + box["height"] / 2)


def test_a_beam_made_in_the_particle_card_runs_and_shows_in_the_beam_tab(page, lab_url):
    errors = []
    open_lab(page, lab_url, errors)
    open_bundled(page, RING)
    page.locator(".in-particle-mode").get_by_text("a beam", exact=True).click()
    # the beam's count is required: the engine says so under its box, and nothing runs
    expect(page.locator("#err-beam-count")).to_contain_text("is required")
    expect(page.locator(".run-button button")).to_be_disabled()
    type_into(page, ".in-beam-count", "4")
    type_into(page, ".in-beam-energy_spread", "0.01")
    expect(page.locator("#scenario-ok")).to_be_visible()
    expect(page.locator("#plan-particles")).to_have_text("4")
    expect(page.locator("#beam-count")).to_contain_text("4 particles")
    run_and_wait(page)
    page.locator(".bk-tab", has_text="Beam").click()
    expect(page.get_by_text("4 of 4 particles drawn")).to_be_visible()
    assert errors == []
