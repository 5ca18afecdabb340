"""The lab's look: text styles for HTML panes and the page frame (colours of our own choosing)."""

import panel as pn

INK = "#1f2933"
MUTED = "#52606d"
ACCENT = "#1d5f8a"
PAGE = "#f4f6f8"

#: styles for the small HTML panes (each Panel component renders in its own shadow root,
#: so these travel with every pane instead of living once in the page head)
TEXT_CSS = f"""
.ro-label {{ font-size: 13px; color: {INK}; cursor: help; white-space: nowrap; }}
.ro-unit {{ font-size: 12.5px; color: {MUTED}; white-space: nowrap; }}
.ro-note {{ font-size: 12.5px; color: {MUTED}; }}
.ro-doc {{ font-size: 12.5px; color: {MUTED}; font-style: italic; }}
.ro-readout {{ font-size: 13px; color: {INK}; font-variant-numeric: tabular-nums; }}
.ro-card-title {{ font-size: 14px; color: {INK}; }}
.ro-section {{ font-size: 12px; letter-spacing: .06em; text-transform: uppercase; color: {ACCENT};
              font-weight: 700; margin: 4px 0 0 0; }}
"""

HEADER_CSS = """
.ro-header { display: flex; align-items: baseline; gap: 18px; padding: 10px 18px 8px 18px;
             background: linear-gradient(90deg, #15324a, #1d5f8a); color: white; border-radius: 6px; }
.ro-brand { font-size: 22px; font-weight: 700; letter-spacing: .02em; }
.ro-brand small { font-weight: 400; opacity: .8; margin-left: 6px; font-size: 15px; }
.ro-title { font-size: 15px; opacity: .95; }
.ro-caution { margin-left: auto; font-size: 12px; opacity: .85; max-width: 520px; text-align: right; }
"""

CARD_STYLE = dict(header_background="#e6ecf2", styles={"background": "white"}, collapsible=False,
                  sizing_mode="stretch_width", margin=(6, 0))


def html_pane(text, **params):
    """An HTML pane carrying the lab's text styles (plus any given stylesheets)."""
    params["stylesheets"] = [TEXT_CSS, *params.get("stylesheets", [])]
    return pn.pane.HTML(text, **params)


def section_card(title, *objects, **params):
    """A titled card of the sidebar or the main area."""
    options = {**CARD_STYLE, **params}
    return pn.Card(*objects, title=title, **options)


#: how inputs read numbers, said once per form
UNITS_NOTE = ('<div class="ro-note">A plain number is in the SI unit shown at the right; any box also takes '
              "a value with units, e.g. <code>1.5 T</code>, <code>30 fs</code>, <code>2 GeV</code>. "
              "Hover over a name for its meaning.</div>")


#: Bokeh's checkbox draws its text beside the box, not in a <label>: a click on the words would do
#: nothing. The real box is stretched, transparent, over the whole widget (so any click toggles it)
#: and a look-alike box is drawn before the words.
CHECKBOX_CSS = """
:host { position: relative; }
input[type=checkbox] { position: absolute; inset: 0; width: 100%; height: 100%; margin: 0; opacity: 0;
                       cursor: pointer; z-index: 1; }
.bk-label { position: relative; padding-left: 21px; }
.bk-label::before { content: ""; position: absolute; left: 0; top: 50%; transform: translateY(-50%);
                    width: 13px; height: 13px; border: 1.5px solid #52606d; border-radius: 3px; background: white; }
input:checked + .bk-label::before { background: #1d5f8a; border-color: #1d5f8a; }
input:checked + .bk-label::after { content: "✓"; position: absolute; left: 2.5px; top: 50%;
                                   transform: translateY(-52%); color: white; font-size: 11px; }
input:focus-visible + .bk-label::before { outline: 2px solid #65a2cb; }
"""


def checkbox(label, **params):
    """A checkbox that a click on its words toggles too."""
    params["stylesheets"] = [CHECKBOX_CSS, *params.get("stylesheets", [])]
    return pn.widgets.Checkbox(label=label, **params)
