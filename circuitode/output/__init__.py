"""What the user sees: text tables, JSON, CSV and PNG.

``report.py`` writes the run's text (≤ 80 columns) and JSON, ``mode_table.py``
the modes table, ``plots.py`` (with ``plot_layout.py``) the waveform PNG;
``*_text.py`` and ``*_plots.py`` do the same for the bench commands;
``html.py`` and ``readback.py`` serve notebooks.  matplotlib is imported
inside the plotting functions only.  No numerics live here, and nothing here
runs a simulation: the jobs in :mod:`circuitode.jobs` do.
"""
