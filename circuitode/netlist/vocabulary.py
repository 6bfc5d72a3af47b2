"""The language's fixed vocabulary: waveform fields and defaults, element units, figures, methods.

One table per idea, read by :mod:`.build` and by the reference tests; the
words here are the ones docs/language.md documents.
"""
from __future__ import annotations

import math

from .. import model as src

from .expressions import did_you_mean

__all__ = ["METHOD_NAMES", "WAVEFORM_FIELDS", "WAVEFORM_CLASSES", "WAVEFORM_WORDS", "TOGGLE_FIELDS", "FIGURE_WORDS",
           "ELEMENT_UNITS", "PULSE_EDGE_WORDS", "word_hint", "written_field"]

#: Integrator names a `transient` statement may give (see circuit.Analysis).
METHOD_NAMES = ("auto", "rk4", "rk45", "dop853", "radau", "bdf", "exact", "trapezoidal", "trbdf2")

#: Waveform kind → written field → (dataclass field, unit role, default or None when required).
#: Unit roles: "signal" (V or A by source kind), "s", "Hz", "rad", "count".
WAVEFORM_FIELDS: dict[str, dict[str, tuple[str, str, float | None]]] = {
    "step": {"from": ("before", "signal", 0.0), "to": ("after", "signal", None), "at": ("at", "s", 0.0)},
    "ramp": {"from": ("initial", "signal", 0.0), "to": ("final", "signal", None), "start": ("start", "s", 0.0),
             "duration": ("duration", "s", None)},
    # IEEE Std 181 terms: base and top state levels, pulse repetition period.  The
    # flat top is `hold` or follows from `duty`; `edges` sets both transition
    # durations, `rising`/`falling` one each (see build.pulse_times).
    "pulses": {"base": ("low", "signal", 0.0), "top": ("high", "signal", None), "every": ("period", "s", None),
               "hold": ("width", "s", math.nan), "duty": ("duty", "%", math.nan), "edges": ("edges", "s", math.nan),
               "rising": ("rise", "s", math.nan), "falling": ("fall", "s", math.nan), "from": ("delay", "s", 0.0),
               "repeats": ("count", "count", math.inf)},
    "sine": {"amplitude": ("amplitude", "signal", None), "frequency": ("frequency", "Hz", None),
             "phase": ("phase", "rad", 0.0), "offset": ("offset", "signal", 0.0), "delay": ("delay", "s", 0.0)},
    "exponential": {"from": ("initial", "signal", 0.0), "to": ("final", "signal", None),
                    "delay": ("delay", "s", 0.0), "time_constant": ("time_constant", "s", None)},
}
WAVEFORM_CLASSES = {"step": src.Step, "ramp": src.Ramp, "pulses": src.PulseTrain, "sine": src.Sine,
                    "exponential": src.Exponential}
#: Every word that may follow a source's nodes (``constant`` and ``points`` have their own grammar).
WAVEFORM_WORDS = ("constant", "step", "ramp", "pulses", "sine", "exponential", "points")
#: The pulse fields that set the edges: ``edges`` for both, or ``rising`` and/or ``falling``.
PULSE_EDGE_WORDS = ("edges", "rising", "falling")

#: Words an earlier version of the language used, with the word that now does the job.  They are
#: not accepted: an unknown word that is one of these gets its successor as the hint.
_FORMER_WORDS = {
    "dc": "constant", "pwl": "points", "pulse": "pulses", "low": "base", "high": "top", "delay": "from",
    "rise": "rising", "fall": "falling", "width": "hold", "period": "every", "count": "repeats",
    "start": "from",
}


def written_field(waveform: type, attr: str) -> str:
    """The word a netlist writes for field ``attr`` of a waveform class ("high" of a PulseTrain → "top")."""
    for kind, cls in WAVEFORM_CLASSES.items():
        if cls is waveform:
            for word, (name, _role, _default) in WAVEFORM_FIELDS[kind].items():
                if name == attr:
                    return word
    return attr


def word_hint(word: str, choices) -> str:
    """Hint for an unknown ``word``: its successor when it is a former word of the language, else the closest."""
    successor = _FORMER_WORDS.get(word)
    if successor is not None and successor in choices:
        return f"did you mean '{successor}'?"
    return did_you_mean(word, choices)
#: The toggling switch speaks the words of ``pulses``: ``every`` period, ``duty``, ``from`` the first closing.
TOGGLE_FIELDS = {"every": ("period", "s", None), "duty": ("duty", "%", None), "from": ("start", "s", 0.0)}

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
