"""The circuitode netlist language (``.cnet`` files): text → :class:`~circuitode.model.circuit.Circuit`.

>>> from circuitode.netlist import loads
>>> c = loads('ground gnd\\nresistor R1 a -- gnd 4k7\\nvoltage_source V1 a -- gnd constant 5 V')
>>> c.element("R1").resistance
4700.0
"""
from .loader import load, loads
from ..quantities import format_si, parse_quantity, si_scale

__all__ = ["load", "loads", "format_si", "parse_quantity", "si_scale"]
