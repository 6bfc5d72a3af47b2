"""A design study as a notebook would run it: a sweep into a DataFrame and a plot, no files written.

Run it cell by cell in Jupyter, or as ``python docs/notebook_example.py`` from the
top of the repository.  Needs pandas (``pip install -e ".[frames]"``).
"""
from pathlib import Path

import circuitode as co

NETLIST = Path(__file__).resolve().parent.parent / "netlists" / "precharge.cnet"

# %% Sweep the pre-charge resistor and the link capacitance (no out_dir: nothing is written)
study = co.sweep(NETLIST, {"R_pre": "4.7Ω..47Ω/12/log", "C_link": "1mF,1.5mF,2.2mF"})
frame = study.to_frame()
print(frame.attrs["units"]["peak of current through R1"])            # A
passing = frame[frame.filter(like="pass: ").all(axis=1)]
print(passing[["R_pre", "C_link", "peak of current through R1", "energy of power in R1"]].to_string(index=False))

# %% The plot as a matplotlib Figure (Jupyter shows it; study.plot("sweep.png") would save it)
figure = study.plot()

# %% One run's waveforms as a DataFrame: the switching instant keeps both rows, told apart by 'side'
waves = co.simulate(NETLIST)
table = waves.to_frame()
print(table.xs("after", level="side").iloc[:, :2])
figure_of_run = co.waveform_figure(waves, title="pre-charge")

# %% Size the resistor: the interval and the E24 values whose ± 5 % band stays inside it
fit = co.size(NETLIST, "R_pre", "1Ω..1kΩ")
print(fit.intervals[0].low, fit.intervals[0].high, fit.preferred["E24"][0])
