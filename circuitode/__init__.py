"""circuitode: switch-on transients, damping and tolerance batches of RLC networks."""

__version__ = "0.1.0"
