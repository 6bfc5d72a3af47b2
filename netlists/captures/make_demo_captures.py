"""Write the invented demo captures of this folder (run from the repository root).

The "measurements" are synthetic: the DC-link example (dc_link_ring.cnet) simulated with
part values a little off nominal (as parts on a real bench are), then sampled
like a scope would: a trigger delay, a small offset, white noise and an 8-bit
quantisation.  They are invented data for demonstrations, not measurements.

    .venv/bin/python netlists/captures/make_demo_captures.py
"""
from pathlib import Path

import numpy as np

from circuitode.netlist import load
from circuitode.transient import simulate

HERE = Path(__file__).parent
BENCH_VALUES = {"L_cab": "3.25 uH", "C_link": "205 uF", "R_damp": "11.5 mΩ"}  # the invented "parts on the bench"
EDGE = 100e-6          # s, the contactor closes at 100 µs in the netlist
TRIGGER_DELAY = 2.7e-6  # s, the scope's zero is this long after the edge
OFFSET = 0.3           # V, probe offset
NOISE = (0.4, 1.5)     # rms noise of the two channels (V, A)
LSB = (0.4, 2.5)       # quantisation steps (V, A), 8 bits over the screen


def synthetic(dt: float, seed: int):
    circuit = load(HERE.parent / "dc_link_ring.cnet", overrides=BENCH_VALUES)
    w = simulate(circuit, step=0.1e-6, until=1.5e-3)
    t = np.arange(-50e-6, 1.35e-3, dt)  # scope clock: pre-trigger samples have negative times
    rng = np.random.default_rng(seed)
    model_t = t + EDGE + TRIGGER_DELAY
    v = np.interp(model_t, w.t, w["voltage at link"]) + OFFSET + NOISE[0] * rng.standard_normal(t.size)
    i = np.interp(model_t, w.t, w["current through L_c"]) + NOISE[1] * rng.standard_normal(t.size)
    return t, LSB[0] * np.round(v / LSB[0]), LSB[1] * np.round(i / LSB[1])


def write_decimal_comma(path: Path) -> None:
    dt = 0.5e-6
    t, v, i = synthetic(dt, seed=14)
    header = [
        "# INVENTED demo capture: synthetic, made by make_demo_captures.py from dc_link_ring.cnet",
        "# with noise, offset and trigger delay added; not a measurement",
        "instrument;synthetic (none)",
        "date;2026-01-01",
        "sample interval;0,5 us",
        "start;-50 us",
        "trigger;CH2 rising 24 V",
        "probe CH1;current clamp 10 mV/A",
        "probe CH2;10:1",
        "record length;" + str(t.size),
        "bandwidth limit;20 MHz",
        "CH1 [A];CH2 [V]",
    ]
    rows = [f"{a:.1f};{b:.1f}".replace(".", ",") for a, b in zip(i, v)]
    path.write_text("\n".join(header + rows) + "\n", encoding="utf-8")


def write_time_column(path: Path) -> None:
    dt = 1e-6
    t, v, i = synthetic(dt, seed=41)
    header = [
        "# INVENTED demo capture (synthetic from dc_link_ring.cnet plus noise, offset and trigger delay)",
        "time [us],current (A),voltage (V)",
    ]
    rows = [f"{a * 1e6:.1f},{c:.1f},{b:.1f}" for a, b, c in zip(t, v, i)]
    path.write_text("\n".join(header + rows) + "\n", encoding="utf-8")


if __name__ == "__main__":
    write_decimal_comma(HERE / "dc_link_ring_decimal_comma.csv")
    write_time_column(HERE / "dc_link_ring_time_column.csv")
