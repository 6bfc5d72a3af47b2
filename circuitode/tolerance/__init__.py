"""Batches over component tolerances: sampling, batched runs, statistics, yield.

Public entry: :func:`run_batch` (and :func:`format_batch_summary` for the text
the command line prints).  See DESIGN "Batches over tolerances".
"""
from .batch import BatchResult, run_batch, run_chunk
from .engine import ChunkWaves, simulate_chunk
from .sampling import SAMPLERS, SampleTable, draw_samples, spreads_with_overrides
from .summary import format_batch_summary
from .statistics import estimate_yield, sensitivity_ranking, summarise_figure, wilson_interval

__all__ = [
    "BatchResult",
    "run_batch",
    "run_chunk",
    "format_batch_summary",
    "ChunkWaves",
    "simulate_chunk",
    "SAMPLERS",
    "SampleTable",
    "draw_samples",
    "spreads_with_overrides",
    "estimate_yield",
    "sensitivity_ranking",
    "summarise_figure",
    "wilson_interval",
]
