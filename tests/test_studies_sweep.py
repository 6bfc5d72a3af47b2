"""Sweeps (circuitode.studies.sweep): grids through the batch engine, checked against closed forms."""
from __future__ import annotations

import numpy as np
import pytest

import circuitode as co
from circuitode.cli import main
from circuitode.errors import CircuitodeError, NetlistError
from circuitode.studies import grid as grid_module
from circuitode.studies import sweep

RC = """\
circuit "RC charge"
param R = 10 Ω
param C = 1 uF
ground gnd
voltage_source V1 in -- gnd constant 10 V
resistor R1 in -- out R
capacitor C1 out -- gnd C initial 0 V
transient until 600 us step 10 ns method exact initial given
record current through R1, power in R1
require peak current through R1 < 0.8 A
"""


@pytest.fixture
def rc(tmp_path):
    path = tmp_path / "rc.cnet"
    path.write_text(RC, encoding="utf-8")
    return path


def test_rc_charge_grid_matches_closed_forms(rc):
    # Nilsson & Riedel, Electric Circuits, ch. 7 (natural and step response of RC circuits):
    # i(t) = (V/R) e^(-t/RC), so the peak is V/R, I²t = ∫ i² dt = V²C/(2R), and the resistor
    # absorbs ½CV² while the capacitor charges from 0 to V.
    result = sweep(rc, {"R": "10Ω..30Ω/4/log", "C": "1uF,1.5uF"})
    R, C = result.points[:, 0], result.points[:, 1]
    assert result.points.shape == (8, 2)
    cols = result.columns()
    V = 10.0
    # The peak is a sample of the exact (matrix-exponential) solution at t = 0: exact.
    np.testing.assert_allclose(cols["peak of current through R1"], V / R, rtol=1e-12)
    # I²t and energy are integrated from the solution per segment (the batch engine's exact
    # integrals), not from the rows, so the 1e-9 holds (the 600 µs window truncates
    # e^(-2T/τ) < 1e-11). With the row trapezoid this test could only ask for 1e-6.
    np.testing.assert_allclose(cols["i2t of current through R1"], V**2 * C / (2 * R), rtol=1e-9)
    np.testing.assert_allclose(cols["energy of power in R1"], 0.5 * C * V**2, rtol=1e-9)
    # verdict and margin per point: peak < 0.8 A holds for R > 12.5 Ω only
    words = "peak of current through R1 < 800 mA"
    np.testing.assert_array_equal(cols[f"pass: {words}"], V / R < 0.8)
    np.testing.assert_allclose(cols[f"margin: {words}"], 0.8 - V / R, rtol=1e-12)


def test_grid_is_one_batch_not_a_loop(rc, monkeypatch):
    calls = []
    real = grid_module.run_chunk

    def counting(task):
        calls.append(task["values"].shape)
        return real(task)

    monkeypatch.setattr(grid_module, "run_chunk", counting)
    sweep(rc, ["R=10Ω..30Ω/3", "C=1uF,2uF"])
    assert calls == [(6, 2)]  # all six points stepped together in one stacked run


def test_first_axis_varies_slowest_and_log_spacing(rc):
    result = sweep(rc, {"R": "10Ω..1kΩ/3/log", "C": [1e-6, 2e-6]})
    np.testing.assert_allclose(result.points[:, 0], [10, 10, 100, 100, 1000, 1000])
    np.testing.assert_allclose(result.points[:, 1], [1e-6, 2e-6] * 3)
    assert result.axes[0].log and not result.axes[1].log


def test_element_values_can_be_varied_directly(rc):
    # R1 is the resistor itself (a part), not the parameter R
    result = sweep(rc, ["R1=20Ω,40Ω"])
    np.testing.assert_allclose(result.columns()["peak of current through R1"], [0.5, 0.25], rtol=1e-12)


@pytest.mark.parametrize("spec, words", [
    ("Rx=1Ω,2Ω", "did you mean 'R'"),
    ("R=1F,2F", "ohms"),
    ("R=1Ω..2Ω", "LOW..HIGH/COUNT"),
    ("R=1Ω..2Ω/1", "at least 2"),
    ("R=-1Ω..2Ω/4/log", "positive"),
    ("R=1Ω..2Ω/4/cubic", "/lin or /log"),
])
def test_bad_axes_are_refused_with_what_to_write(rc, spec, words):
    with pytest.raises((CircuitodeError, NetlistError)) as info:
        sweep(rc, [spec])
    assert words in str(info.value)


def test_four_axes_are_refused(rc):
    with pytest.raises(CircuitodeError, match="one to three"):
        sweep(rc, ["R=1Ω,2Ω", "C=1uF", "R1=1Ω", "C1=1uF"])


def test_to_frame_carries_units_and_one_row_per_point(rc):
    pd = pytest.importorskip("pandas")
    frame = sweep(rc, ["R=10Ω,20Ω,40Ω"]).to_frame()
    assert isinstance(frame, pd.DataFrame) and len(frame) == 3
    assert frame.attrs["units"]["R"] == "Ω"
    assert frame.attrs["units"]["i2t of current through R1"] == "A²s"
    assert frame["ok"].all()


def test_html_repr_is_compact(rc):
    result = sweep(rc, ["R=10Ω..40Ω/40"])
    html = result._repr_html_()
    assert html.count("<tr>") <= 14  # header + 12 rows, the rest elided
    assert "rows …" in html


def test_cli_sweep_writes_table_and_plot(rc, tmp_path, capsys):
    out = tmp_path / "sw"
    code = main(["sweep", str(rc), "--vary", "R=5Ω..40Ω/6/log", "--vary", "C=1uF..2uF/4", "--out", str(out)])
    text = capsys.readouterr().out
    assert code == 0
    assert "every requirement met at" in text
    header = (out / "sweep.csv").read_text(encoding="utf-8").splitlines()[0]
    assert header.startswith("R [Ω],C [F],peak of current through R1 [A]")
    assert (out / "sweep.png").stat().st_size > 10_000
    assert len((out / "sweep.csv").read_text(encoding="utf-8").splitlines()) == 1 + 24
    # a rerun without plots leaves no stale picture beside the new table
    assert main(["sweep", str(rc), "--vary", "R=20Ω,40Ω", "--out", str(out), "--no-plots"]) == 0
    assert not (out / "sweep.png").exists()


def test_cli_sweep_bad_name_is_exit_2(rc, capsys):
    assert main(["sweep", str(rc), "--vary", "Q=1Ω,2Ω"]) == 2
    assert "neither a parameter nor a part" in capsys.readouterr().err


def test_api_is_flat():
    assert co.sweep is sweep


@pytest.mark.parametrize("vary, panels, contour", [
    (["R=10Ω..40Ω/5/log"], 1, False),
    (["R=10Ω..40Ω/5/log", "C=1uF,2uF"], 1, False),                    # a line per value of C
    (["R=10Ω..40Ω/5/log", "C=1uF..2uF/4"], 1, True),                  # contour map
    (["R=10Ω..40Ω/5/log", "C=1uF,2uF", "V1.value=5V,10V,20V"], 3, False),  # a column per value of V1
])
def test_plot_kinds_return_a_figure_and_write_nothing(rc, tmp_path, monkeypatch, vary, panels, contour):
    from matplotlib.figure import Figure

    monkeypatch.chdir(tmp_path)
    before = sorted(tmp_path.iterdir())
    figure = sweep(rc, vary).plot()
    assert isinstance(figure, Figure)
    drawn = [ax for ax in figure.axes if ax.get_visible() and ax.get_xlabel() == "R [Ω]"]
    assert len(drawn) == panels
    for ax in drawn:
        if contour:
            assert ax.collections and not ax.lines
        else:
            assert len(ax.lines) >= 3 * (2 if len(vary) > 1 else 1)  # line + passing + failing markers
    assert sorted(tmp_path.iterdir()) == before


def test_timing_cannot_be_swept_and_says_so(tmp_path, capsys):
    path = tmp_path / "timing.cnet"
    path.write_text(RC.replace("voltage_source V1 in -- gnd constant 10 V\nresistor R1 in -- out R",
                               "param t_on = 1 us\nvoltage_source V1 in -- gnd constant 10 V\n"
                               "switch K1 in -- a closes at t_on opens at 5 us\nresistor R1 a -- out R"),
                    encoding="utf-8")
    # a switch that moves twice keeps its instants common (one that moves once may vary: see
    # tests/test_timed_switches.py)
    assert main(["sweep", str(path), "--vary", "t_on=1us,2us"]) == 2
    err = capsys.readouterr().err
    assert "--vary t_on: it reaches the switching time of K1" in err and "timing" in err


def test_a_parameter_that_feeds_nothing_is_refused(tmp_path):
    path = tmp_path / "rc.cnet"
    path.write_text(RC.replace("param C = 1 uF", "param C = 1 uF\nparam tau = R * C"), encoding="utf-8")
    with pytest.raises(CircuitodeError, match="tau feeds no element value"):
        sweep(path, ["tau=1us,2us"])


@pytest.mark.parametrize("vary", [["R=10Ω..40Ω/5/log"], ["R=10Ω..40Ω/5/log", "C=1uF..2uF/4"]])
def test_the_title_of_a_long_named_circuit_stays_inside_the_image(rc, tmp_path, vary):
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    long = tmp_path / "long.cnet"
    long.write_text(rc.read_text(encoding="utf-8").replace(
        'circuit "RC charge"', 'circuit "RC charge of a film capacitor through a wirewound resistor, one pulse"'),
        encoding="utf-8")
    figure = sweep(long, vary).plot()
    canvas = FigureCanvasAgg(figure)
    canvas.draw()
    from matplotlib.text import Text

    title = [t for t in figure.findobj(Text) if t.get_text() == figure.get_suptitle()]
    assert title and "wirewound" in figure.get_suptitle()
    box, frame = title[0].get_window_extent(canvas.get_renderer()), figure.bbox
    assert frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1


def test_a_long_title_stays_inside_a_one_panel_sweep_figure(tmp_path):
    """The title of a one-panel sweep (5.2 in wide) is wrapped, not cut at both edges
    (the reactor example's 'Line reactor switched onto 230 V mains: filled points …' was)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    path = tmp_path / "long.cnet"
    path.write_text(RC.replace('"RC charge"', '"Line reactor switched onto 230 V mains, long title"'),
                    encoding="utf-8")
    figure = sweep(path, ["R=10Ω..40Ω/3"]).plot()
    canvas = FigureCanvasAgg(figure)
    canvas.draw()
    title = figure._suptitle
    box = title.get_window_extent(renderer=canvas.get_renderer())
    assert "\n" in title.get_text()
    assert box.x0 >= 0 and box.x1 <= figure.bbox.width


def test_sweep_and_size_text_fit_80_columns(rc, tmp_path, capsys):
    """The grid line of a two-name sweep (94 columns here) and the 'searched …' line of size
    (98 for the README's sizing) went past 80 columns; they wrap under their indent."""
    assert main(["sweep", str(rc), "--vary", "R=10Ω..40Ω/4/log", "--vary", "C=1uF,2uF",
                 "--out", str(tmp_path / "s"), "--no-plots"]) == 0
    swept = capsys.readouterr().out
    assert main(["size", str(rc), "--part", "R", "--range", "1Ω..1kΩ", "--points", "9"]) == 0
    sized = capsys.readouterr().out
    for text in (swept, sized):
        assert max(len(line) for line in text.splitlines()) <= 80
    assert "sweep: 8 points (R 4 values 10 Ω to 40 Ω (log) × C 2 values 1 µF to 2 µF)," in " ".join(
        line.strip() for line in swept.splitlines())
