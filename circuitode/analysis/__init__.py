"""Numbers from waveforms and models: figures, limits and modes.

``figures/`` holds pure functions of ``(t, y)`` (levels, IEEE 181 step terms,
integrals, ringing); ``measure.py`` names them with units and summarises a
run; ``limits.py`` turns requirements into verdicts and margins;
``modes.py`` is the eigen-analysis (ζ, ωn, Q, τ) per switch configuration.
"""
