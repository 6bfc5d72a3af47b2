"""Design studies: sweeps over one to three parameters or parts, and sizing a part so that
every requirement holds.  Both evaluate their points through the tolerance engine's
batched runs (:mod:`circuitode.tolerance`), never a loop of single runs.
"""
from .grid import Axis, PointResults, evaluate_points, parse_axis, study_circuit
from .sweep import SweepResult, sweep

__all__ = ["Axis", "PointResults", "evaluate_points", "parse_axis", "study_circuit", "SweepResult", "sweep"]
