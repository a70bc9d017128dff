"""Figures drawn from result tables (never from the engine directly), one module per subject.

:mod:`.look` holds the shared look (colours, markers, hatches, rc settings) and the saving that
keeps PNG bytes stable; every figure function takes tables and a path and returns the path.
"""

from .blocking import blocking_figure, estimate_figure
from .equipment import forecast_figure, plan_figure, resources_figure
from .look import HATCHES, LOOK, STYLE_CYCLE, UTILISATION_CMAP, bar_style_for, save_figure, style_for
from .paths import gsnr_figure
from .topology import topology_figure

__all__ = [
    "STYLE_CYCLE",
    "HATCHES",
    "LOOK",
    "UTILISATION_CMAP",
    "style_for",
    "bar_style_for",
    "save_figure",
    "blocking_figure",
    "resources_figure",
    "topology_figure",
    "forecast_figure",
    "estimate_figure",
    "plan_figure",
    "gsnr_figure",
]
