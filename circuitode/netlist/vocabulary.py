"""The language's fixed vocabulary: waveform fields and defaults, element units, figures, methods.

One table per idea, read by :mod:`.build` and by the reference tests; the
words here are the ones docs/language.md documents.
"""
from __future__ import annotations

import math

from ..model import sources as src

__all__ = ["METHOD_NAMES", "WAVEFORM_FIELDS", "WAVEFORM_CLASSES", "TOGGLE_FIELDS", "FIGURE_WORDS", "ELEMENT_UNITS"]

#: Integrator names a `transient` statement may give (see circuit.Analysis).
METHOD_NAMES = ("auto", "rk4", "rk45", "dop853", "radau", "bdf", "exact")

#: Waveform kind → written field → (dataclass field, unit role, default or None when required).
#: Unit roles: "signal" (V or A by source kind), "s", "Hz", "rad", "count".
WAVEFORM_FIELDS: dict[str, dict[str, tuple[str, str, float | None]]] = {
    "step": {"from": ("before", "signal", 0.0), "to": ("after", "signal", None), "at": ("at", "s", 0.0)},
    "ramp": {"from": ("initial", "signal", 0.0), "to": ("final", "signal", None), "start": ("start", "s", 0.0),
             "duration": ("duration", "s", None)},
    "pulse": {"low": ("low", "signal", 0.0), "high": ("high", "signal", None), "delay": ("delay", "s", 0.0),
              "rise": ("rise", "s", 0.0), "fall": ("fall", "s", 0.0), "width": ("width", "s", None),
              "period": ("period", "s", None), "count": ("count", "count", math.inf)},
    "sine": {"amplitude": ("amplitude", "signal", None), "frequency": ("frequency", "Hz", None),
             "phase": ("phase", "rad", 0.0), "offset": ("offset", "signal", 0.0), "delay": ("delay", "s", 0.0)},
    "exponential": {"from": ("initial", "signal", 0.0), "to": ("final", "signal", None),
                    "delay": ("delay", "s", 0.0), "time_constant": ("time_constant", "s", None)},
}
WAVEFORM_CLASSES = {"step": src.Step, "ramp": src.Ramp, "pulse": src.PulseTrain, "sine": src.Sine,
                     "exponential": src.Exponential}
TOGGLE_FIELDS = {"period": ("period", "s", None), "duty": ("duty", "%", None), "start": ("start", "s", 0.0)}

#: Written figure words → canonical names of circuit.FIGURES.
FIGURE_WORDS = {
    "peak": "peak", "minimum": "minimum", "final": "final", "overshoot": "overshoot", "undershoot": "undershoot",
    "rise time": "rise_time", "settling time": "settling_time", "rms": "rms", "mean": "mean", "i2t": "i2t",
    "I²t": "i2t", "energy": "energy", "max slope": "max_slope", "damping ratio": "damping_ratio",
    "damped frequency": "damped_frequency",
}
ELEMENT_UNITS = {
    "resistor": ("Ω", "resistance", "a resistor's value", None),
    "capacitor": ("F", "capacitance", "a capacitor's value", ("V", "initial_voltage", "a capacitor's initial voltage")),
    "inductor": ("H", "inductance", "an inductor's value", ("A", "initial_current", "an inductor's initial current")),
}
