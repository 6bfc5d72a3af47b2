"""Batches over component tolerances (filled in below as the engine lands)."""
from .sampling import SampleTable, draw_samples, spreads_with_overrides
from .statistics import estimate_yield, sensitivity_ranking, summarise_figure, wilson_interval

__all__ = [
    "SampleTable",
    "draw_samples",
    "spreads_with_overrides",
    "estimate_yield",
    "sensitivity_ranking",
    "summarise_figure",
    "wilson_interval",
]
