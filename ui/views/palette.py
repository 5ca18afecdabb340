"""Colours, line styles and the common figure look of the lab."""

from bokeh.palettes import Cividis256, Inferno256, RdBu11, interp_palette
from bokeh.plotting import figure

#: damped = radiation reaction on; undamped = off (what it would radiate)
RUN_STYLES = {
    "damped": dict(color="#c2410c", line_width=2.2, line_dash="solid"),
    "undamped": dict(color="#1d5f8a", line_width=1.8, line_dash=[6, 4]),
}
RUN_LABELS = {"damped": "damped", "undamped": "undamped (no reaction force)"}
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
