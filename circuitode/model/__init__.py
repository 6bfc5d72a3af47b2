"""The circuit model: what the netlist says, as SI floats and plain dataclasses.

``circuit.py`` holds the elements, probes, schedules, requirements and the
:class:`~circuitode.model.circuit.Circuit`; ``sources.py`` the source
waveforms (value, breakpoints, exact linear generator); ``source_batch.py``
their per-sample levels for batches; ``configurations.py`` the switch
configurations a run can reach and when.  Nothing here solves or judges:
checks, equations and the driver read this model and never write it.
"""
