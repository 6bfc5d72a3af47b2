"""The RLC ladder the sparse tests share: a step source through Z0 = √(L/C), per section a
series 50 mΩ + 10 µH and a shunt 1 µF, terminated in Z0 (the test circuit of
bench/ladder_scaling.py)."""
import numpy as np

L_SEC, C_SEC = 10e-6, 1e-6
Z0 = float(np.sqrt(L_SEC / C_SEC))


def ladder(sections):
    """Netlist text of a ladder of ``sections`` sections (2·sections states)."""
    lines = ['circuit "ladder"', "ground gnd", "voltage_source V1 src -- gnd constant 1 V",
             f"resistor R_s src -- n0 {Z0!r} Ω"]
    for k in range(1, sections + 1):
        lines += [f"resistor R{k} n{k - 1} -- m{k} 50 mΩ", f"inductor L{k} m{k} -- n{k} 10 uH",
                  f"capacitor C{k} n{k} -- gnd 1 uF"]
    lines += [f"resistor R_t n{sections} -- gnd {Z0!r} Ω", "transient until 1 ms"]
    return "\n".join(lines) + "\n"
