"""The plots of a solved sheet as SVG text, for the sheet page, its downloads and the record alike.

`axes` draws a chart (axes fitted to the data, round ticks, labels that never overlap, a legend),
`series` works out the numbers from an analysis, `figures` makes each plot of a sheet.
"""

from calc.record.plots.axes import Axis, Chart, clip_segments, esc, fit_axis, nice_ticks, short, text_box, tick_text
from calc.record.plots.figures import (
    KEYS,
    Plot,
    all_plots,
    chainage_chart,
    curves_plot,
    efficiency_plot,
    head_flow_plot,
    npsh_plot,
    plot_named,
    power_plot,
    profile_plot,
)
from calc.record.plots.series import CurveSeries, Mark, SystemCurve

__all__ = ["KEYS", "Axis", "Chart", "CurveSeries", "Mark", "Plot", "SystemCurve", "all_plots", "chainage_chart",
           "clip_segments", "curves_plot", "efficiency_plot", "esc", "fit_axis", "head_flow_plot", "nice_ticks",
           "npsh_plot", "plot_named", "power_plot", "profile_plot", "short", "text_box", "tick_text"]
