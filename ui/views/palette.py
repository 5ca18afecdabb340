"""Colours, line styles and the common figure look of the lab."""

from bokeh.palettes import Cividis256, Inferno256, RdBu11, interp_palette
from bokeh.plotting import figure

from tracker.engine import MODEL_ORDER

#: every radiation-reaction model is drawn in the same colour and dash wherever it appears, so a
#: curve is recognised across tabs and runs (colours and dashes of our own choosing, told apart
#: by dash as well as hue)
MODEL_STYLES = {
    "none": dict(color="#1d5f8a", line_width=1.8, line_dash=[6, 4]),
    "landau-lifshitz": dict(color="#c2410c", line_width=2.2, line_dash="solid"),
    "landau-lifshitz-quantum": dict(color="#7b3294", line_width=2.0, line_dash=[2, 3]),
    "quantum-stochastic": dict(color="#1a7f37", line_width=1.6, line_dash="solid"),
}
#: short names of the models in legends and table heads
MODEL_LABELS = {
    "none": "no reaction force",
    "landau-lifshitz": "Landau–Lifshitz",
    "landau-lifshitz-quantum": "quantum-corrected LL",
    "quantum-stochastic": "stochastic emission",
}
#: drawing order: the run without reaction force underneath, the stochastic one on top
DRAW_ORDER = MODEL_ORDER
START_COLOR = "#111827"

E_PALETTE = Inferno256
B_PALETTE = Cividis256
#: blue negative, white zero, red positive (RdBu11 runs from blue to red)
COMPONENT_PALETTE = interp_palette(RdBu11, 255)

TOOLS = "pan,box_zoom,wheel_zoom,reset,save"


def new_figure(title, x_label, y_label, height=260, **kwargs):
    """A Bokeh figure in the lab's style, with the save tool for PNG export.

    Stretches to the available width unless a ``frame_width`` is given.
    """
    if "frame_width" in kwargs:
        kwargs.setdefault("frame_height", height)
        kwargs.update(width=None, height=None)
    else:
        kwargs.update(height=height, sizing_mode="stretch_width")
    fig = figure(title=title, tools=TOOLS, toolbar_location="above", **kwargs)
    fig.xaxis.axis_label = x_label
    fig.yaxis.axis_label = y_label
    fig.title.text_font_size = "13px"
    fig.title.text_color = "#1f2933"
    fig.axis.axis_label_text_font_style = "normal"
    fig.axis.axis_label_text_font_size = "12px"
    fig.grid.grid_line_alpha = 0.35
    fig.outline_line_color = "#c9d2dc"
    fig.min_border_left = 56
    fig.toolbar.logo = None
    return fig


def style_legend(fig):
    """One-line legend under the plot, clear of the data; a click hides a curve."""
    legend = fig.legend[0]
    fig.add_layout(legend, "below")
    legend.orientation = "horizontal"
    legend.click_policy = "hide"
    legend.label_text_font_size = "11px"
    legend.spacing = 12
    legend.padding = 2
    legend.margin = 2
    legend.border_line_alpha = 0


def legend_text(item):
    """The text of a legend entry (a LegendItem's label is a value spec or a plain string)."""
    label = item.label
    if isinstance(label, dict):
        return label.get("value")
    return getattr(label, "value", label)


def show_legend_items(figures, models):
    """Show legend entries only for the models run (entries named by ``MODEL_LABELS``)."""
    shown = {MODEL_LABELS[m] for m in models}
    for fig in figures:
        for legend in fig.legend:
            for item in legend.items:
                text = legend_text(item)
                if text in MODEL_LABELS.values():
                    item.visible = text in shown
