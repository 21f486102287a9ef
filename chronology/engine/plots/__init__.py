"""Plots of engine results, drawn with matplotlib's Agg canvas (no display needed).

Each plot function returns :class:`~chronology.engine.plots.calibration_plot.PlotImages`
(SVG and PNG bytes).  Colours come from the colour-blind-safe palette of
Okabe & Ito (2008); every plot names its calibration curve, says so when the
curve is synthetic, and carries the caution that results need specialist review.
"""

from .calibration_plot import CAUTION, OKABE_ITO, PlotImages, calibration_plot

__all__ = ["CAUTION", "OKABE_ITO", "PlotImages", "calibration_plot"]
