"""Parts named from outside the netlist (circuitode.netlist.parts): --set, --tol, --vary on element values."""
from __future__ import annotations

import pytest

import circuitode as co
from circuitode.cli import main
from circuitode.errors import NetlistError
from circuitode.netlist import load, loads
from circuitode.netlist.parts import expose_parts, part_names, resolve_part

TEXT = """\
circuit "parts"
param R_pre = 10 Ω ± 5 %
ground gnd
voltage_source pack pack -- gnd constant 48 V
switch K_pre pack -- b closes at 1 ms
resistor R1 b -- link R_pre
switch K_main pack -- link closes when voltage at link > 43 V on 2 mΩ
capacitor C1 link -- gnd 1.5 mF ± 20 % initial 0 V
resistor R_load link -- gnd 2.2 kΩ
transient until 20 ms step 10 us method exact
record current through R1
require peak current through R1 < 6 A
"""


def test_part_names_cover_every_element_field():
    names = part_names(loads(TEXT))
    for name in ("R1", "C1", "C1.initial", "K_main.on", "K_main.off", "pack.value", "R_load"):
        assert name in names


def test_set_reaches_element_values_and_fields():
    c = loads(TEXT, overrides={"R1": "47 Ω", "K_main.on": "5 mΩ", "pack.value": "24 V", "C1": 1e-3})
    assert c.element("R1").resistance == 47.0
    assert c.element("K_main").on_resistance == pytest.approx(5e-3)
    assert c.element("pack").waveform.value == 24.0
    assert c.element("C1").capacitance == 1e-3
    # R1 no longer follows R_pre; C1's inline ± 20 % now spreads around the new value
    assert ("R1", "resistance") not in c.recipes
    assert c.spreads["C1"].nominal == 1e-3 and c.spreads["C1"].relative == pytest.approx(0.2)


def test_set_part_changes_the_physics():
    # peak current at closing is V / R (Nilsson & Riedel ch. 7): 48 V / 47 Ω
    waves = co.simulate(loads(TEXT, overrides={"R1": "47 Ω"}))
    assert abs(waves["current through R1"]).max() == pytest.approx(48 / 47, rel=1e-9)


@pytest.mark.parametrize("name, words", [
    ("K_main.of", "did you mean 'K_main.off' or 'K_main.on'?"),
    ("R_pr", "did you mean 'R_pre'"),
    ("C1.voltage", "C1 offers 'C1', 'C1.initial'"),
])
def test_unknown_names_get_did_you_mean(name, words):
    with pytest.raises(NetlistError) as info:
        loads(TEXT, overrides={name: "1"})
    assert words in str(info.value)


def test_wrong_unit_for_a_part_is_refused():
    with pytest.raises(NetlistError, match="ohms"):
        loads(TEXT, overrides={"K_main.on": "5 mF"})


def test_expose_parts_gives_a_recipe_per_part():
    c = expose_parts(loads(TEXT), ["K_main.on", "R_load"])
    assert c.parameters["K_main.on"] == pytest.approx(2e-3)
    assert c.recipes[("K_main", "on_resistance")].names == {"K_main.on"}
    assert resolve_part(c, "R_load").unit == "Ω"


def test_tolerance_batch_on_parts(tmp_path, capsys):
    path = tmp_path / "p.cnet"
    path.write_text(TEXT, encoding="utf-8")
    code = main(["tolerance", str(path), "--samples", "16", "--tol", "R1=10%", "--tol", "K_main.on=50%",
                 "--out", str(tmp_path / "t"), "--no-plots"])
    assert code == 0
    header = (tmp_path / "t" / "samples.csv").read_text(encoding="utf-8").splitlines()[0]
    assert "R1" in header and "K_main.on" in header
    capsys.readouterr()


def test_run_set_on_a_part_from_the_command_line(tmp_path, capsys):
    path = tmp_path / "p.cnet"
    path.write_text(TEXT, encoding="utf-8")
    assert main(["run", str(path), "--set", "R1=4.7Ω", "--out", str(tmp_path / "r"), "--no-plots"]) == 1
    assert "FAIL" in capsys.readouterr().out  # 48 V / 4.7 Ω > 6 A
    assert main(["run", str(path), "--set", "Rx=4.7Ω", "--out", str(tmp_path / "r")]) == 2
    assert "neither a parameter nor a part" in capsys.readouterr().err


def test_param_without_tolerance_can_be_given_one_with_tol(tmp_path):
    text = TEXT.replace("param R_pre = 10 Ω ± 5 %", "param R_pre = 10 Ω")
    path = tmp_path / "p.cnet"
    path.write_text(text, encoding="utf-8")
    result = co.run_batch(path, samples=8, out_dir=tmp_path / "t", tol_overrides=["R_pre=10%"], plots=False,
                          progress=False)
    assert "R_pre" in result.samples.names
    assert result.samples.values[:, result.samples.names.index("R_pre")].std() > 0


def test_ideal_switch_resistance_cannot_vary_until_it_has_one(tmp_path):
    from circuitode.studies import sweep

    path = tmp_path / "p.cnet"
    path.write_text(TEXT, encoding="utf-8")
    with pytest.raises(NetlistError, match="K_pre is ideal when closed"):
        sweep(path, ["K_pre.on=1mΩ,1Ω"])
    # once set, it varies: peak = 48 V / (10 Ω + R_on) at closing (Nilsson & Riedel ch. 7)
    result = sweep(path, ["K_pre.on=1mΩ,1Ω"], overrides={"K_pre.on": "1 mΩ"})
    assert list(result.columns()["peak of current through R1"]) == pytest.approx([48 / 10.001, 48 / 11.0],
                                                                                 rel=1e-9)
