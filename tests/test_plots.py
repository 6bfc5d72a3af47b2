"""The run's waveform figure (circuitode.output.plots): what it writes must be legible."""
from __future__ import annotations

import itertools

from matplotlib.backends.backend_agg import FigureCanvasAgg

from circuitode.jobs.run import run_job
from circuitode.netlist import loads
from circuitode.output.plots import waveform_figure

# The resistor and the capacitor carry one current: two peaks (10 V / 10 Ω = 1 A at t = 0,
# Nilsson & Riedel ch. 7, RC step) at one place, and two limits 4 % of the span apart.
RC = """
circuit "two labels at one place"
ground g
voltage_source V1 a -- g constant 10 V
resistor R1 a -- b 10 Ω
capacitor C1 b -- g 1 uF initial 0 V
transient until 50 us step 50 ns method exact
record current through R1, current through C1
require peak current through R1 < 1.2 A
require peak current through C1 < 1.25 A
"""


def test_peak_and_limit_labels_at_one_place_do_not_overlap():
    """The bridge example's two limits (80 A and 75 A) and two peaks (69.15 A and 68.18 A at
    5 ms) were printed over each other; labels near each other are now stacked."""
    result = run_job(loads(RC), with_modes=False)
    assert [r.passed for r in result.limits] == [True, True]
    figure = waveform_figure(result.waveforms, limits=result.limits)
    canvas = FigureCanvasAgg(figure)
    canvas.draw()
    renderer = canvas.get_renderer()
    (panel,) = [ax for ax in figure.axes if ax.get_ylabel().startswith("current")]
    texts = [t for t in panel.texts if t.get_text().strip()]
    words = [t.get_text() for t in texts]
    assert sum("1 A" == w for w in words) == 2 and sum(w.startswith("pass: peak") for w in words) == 2
    boxes = [t.get_window_extent(renderer=renderer) for t in texts]
    for (a, wa), (b, wb) in itertools.combinations(zip(boxes, words), 2):
        assert not a.overlaps(b), f"{wa!r} overlaps {wb!r}"


def _panel_texts(figure, word):
    canvas = FigureCanvasAgg(figure)
    canvas.draw()
    (panel,) = [ax for ax in figure.axes if ax.get_ylabel().startswith(word)]
    texts = [t for t in panel.texts if t.get_text().strip()]
    return panel, texts, [t.get_window_extent(renderer=canvas.get_renderer()) for t in texts]


def test_a_limit_label_moves_along_its_line_off_a_peak_label():
    """capacitor_bank.cnet: the 579 V peak of C_b2 at 26 ms was printed under the right-aligned
    label of the 650 V limit; the label now takes a free place along its line."""
    from circuitode.netlist import load

    from pathlib import Path

    result = run_job(load(Path(__file__).parents[1] / "netlists" / "capacitor_bank.cnet"), with_modes=False)
    panel, texts, boxes = _panel_texts(waveform_figure(result.waveforms, limits=result.limits), "voltage")
    words = [t.get_text() for t in texts]
    assert "579 V" in words and any(w.startswith("pass: peak of voltage at bus < 650 V") for w in words)
    for (a, wa), (b, wb) in itertools.combinations(zip(boxes, words), 2):
        assert not a.overlaps(b), f"{wa!r} overlaps {wb!r}"
    frame = panel.get_window_extent()
    assert all(frame.x0 - 1 <= box.x0 and box.x1 <= frame.x1 + 1 for box, w in zip(boxes, words)
               if w.startswith("pass"))


def test_a_note_on_a_window_after_an_event_stands_over_that_window():
    """filter_damping_relay.cnet: 'damping ratio …, after 1 ms > 0.3' was written from the left
    edge, over 0–1 ms, the part of the run it does not judge; it now starts at 1 ms."""
    from pathlib import Path

    from circuitode.netlist import load

    result = run_job(load(Path(__file__).parents[1] / "netlists" / "filter_damping_relay.cnet"), with_modes=False)
    panel, texts, boxes = _panel_texts(waveform_figure(result.waveforms, limits=result.limits), "voltage")
    (note,) = [b for t, b in zip(texts, boxes) if "damping ratio" in t.get_text() and "after 1 ms" in t.get_text()]
    one_ms = panel.transData.transform((1.0, 0.0))[0]  # the time axis is in ms
    assert panel.get_xlim()[1] == 3.0 and note.x0 >= one_ms - 1.0
    for (a, wa), (b, wb) in itertools.combinations(zip(boxes, [t.get_text() for t in texts]), 2):
        assert not a.overlaps(b), f"{wa!r} overlaps {wb!r}"
