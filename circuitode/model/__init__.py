"""The circuit model: what the netlist says, as SI floats and plain dataclasses.

``elements.py`` holds the parts, ``switch_controls.py`` what moves a switch,
``probes.py`` what can be recorded or limited, ``run_settings.py`` the
analysis window, requirements and component spreads, and ``circuit.py`` the
:class:`Circuit` that gathers them.  ``waveforms.py`` states what every source
waveform promises (value, breakpoints, exact linear generator) and holds the
shared machinery; ``aperiodic.py`` and ``periodic.py`` the waveform kinds;
``sources.py`` the :class:`SourceBank` of a circuit's inputs;
``source_batch.py`` their per-sample levels for batches; ``configurations.py``
the switch configurations a run can reach and when.  Nothing here solves or
judges: checks, equations and the driver read this model and never write it.
The model's vocabulary is importable from this package directly
(``from circuitode.model import Circuit, Resistor, Dc``).
"""
from .aperiodic import Dc, Exponential, PiecewiseLinear, Ramp, Step
from .circuit import Circuit
from .elements import (Capacitor, Coupling, CurrentSource, Diode, Element, Inductor, Resistor, Switch,
                       TwoTerminal, VoltageSource)
from .periodic import PulseTrain, Sine
from .probes import CurrentThrough, NodeVoltage, PowerIn, Probe, VoltageAcross, VoltageBetween
from .run_settings import FIGURES, INITIAL_STATES, Analysis, Recipe, Requirement, Spread
from .sources import SourceBank, Waveform
from .switch_controls import AngleSchedule, DiodeRule, HysteresisRule, PeriodicSchedule, ThresholdRule, TimedSchedule
from .waveforms import LinearGenerator, WaveformError

__all__ = [
    "Resistor", "Capacitor", "Inductor", "VoltageSource", "CurrentSource", "Switch", "Diode",
    "Coupling", "TwoTerminal", "Element",
    "TimedSchedule", "AngleSchedule", "PeriodicSchedule", "ThresholdRule", "HysteresisRule", "DiodeRule",
    "NodeVoltage", "VoltageBetween", "VoltageAcross", "CurrentThrough", "PowerIn", "Probe",
    "INITIAL_STATES", "FIGURES", "Analysis", "Requirement", "Spread", "Recipe",
    "Circuit",
    "Dc", "Step", "Ramp", "PiecewiseLinear", "Exponential", "PulseTrain", "Sine", "Waveform",
    "SourceBank", "LinearGenerator", "WaveformError",
]
