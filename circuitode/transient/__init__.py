"""The transient driver: a circuit in, :class:`Waveforms` out.

``driver.py`` owns the run: it cuts the window into segments at every switch
move, source corner and located event, asks the integrator for each segment,
and records two rows at every instant where something jumps.
``settings.py`` turns the netlist's ``transient`` statement and the caller's
options into one set of run settings; ``commutation.py`` settles ideal
diodes at their events; ``window_integrals.py``, ``extrema.py`` and
``carried.py`` collect what a run knows beyond its rows (exact integrals per
segment, extrema located between rows, the fastest mode the outputs see).
"""
from .driver import EVENT_TOL_FRACTION, Event, Waveforms, recorded_probes, simulate
from .settings import DEFAULT_POINTS

__all__ = ["simulate", "Waveforms", "Event", "DEFAULT_POINTS", "EVENT_TOL_FRACTION", "recorded_probes"]
