"""Measured waveforms: read a scope capture, measure its ringing, compare it with the model.

capture.py reads a CSV capture into a :class:`~circuitode.measured.capture.Capture`;
ringing.py estimates damping and frequencies from the samples alone;
compare.py aligns a capture with a simulated waveform and gives the error figures.
This package sits beside analysis/ in the data flow: it may use the netlist,
model, equations, transient and analysis stages, and output/ uses it.
"""
