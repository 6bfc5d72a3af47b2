"""Topology diagnostics on circuits built directly from the dataclasses.

Background facts the checks rest on (each test names the one it uses):

* [CDK] Chua, Desoer & Kuh, "Linear and Nonlinear Circuits", chapter on state
  equations (normal / proper trees): a loop of capacitors and voltage sources, or
  a cut set of inductors and current sources, ties states together so the
  network has fewer independent states than it has capacitors and inductors
  (from memory).
* [NR4] Nilsson & Riedel, "Electric Circuits", ch. 4: nodal analysis measures
  every node voltage from a chosen reference node.
* [NR6] Nilsson & Riedel, "Electric Circuits", ch. 6: the current in an inductor
  cannot change instantaneously; the voltage on a capacitor cannot (v = L di/dt,
  i = C dv/dt), and 0 <= |k| <= 1 for coupled coils from stored energy (from memory).
* [AS2] Alexander & Sadiku, "Fundamentals of Electric Circuits", ch. 2: voltage
  sources in parallel must be equal (KVL); current sources in series must be
  equal (KCL) (from memory).
* [STR] Strang, "Introduction to Linear Algebra", ch. 6: a symmetric matrix is
  positive definite iff all leading principal minors are positive (from memory).
* [DEO] Deo, "Graph Theory with Applications to Engineering and Computer
  Science", chapters on circuits and cut sets: a graph with e edges, n vertices
  and c components has e - n + c independent (fundamental) circuits (from memory).
"""
from __future__ import annotations

import itertools
import math

import networkx as nx
import pytest
import sympy
from hypothesis import assume, given, settings, strategies as st

from circuitode.model import (
    Analysis,
    Capacitor,
    Circuit,
    Coupling,
    CurrentSource,
    Inductor,
    NodeVoltage,
    PeriodicSchedule,
    Resistor,
    Switch,
    ThresholdRule,
    TimedSchedule,
    VoltageSource,
)
from circuitode.errors import (
    BadCouplingError,
    BadValueError,
    CapacitorLoopError,
    CircuitodeError,
    DuplicateNameError,
    FloatingPartError,
    InductorCutsetError,
    NoGroundError,
    ShortedSourceError,
    UnconnectedNodeError,
    Where,
)
from circuitode.model import Dc, Step
from circuitode.checks.dc import explain_singular_dc
from circuitode.checks.topology import diagnose, verify
from circuitode.model.configurations import reachable_configurations


def circuit(*elements, couplings=(), ground="gnd", until=None):
    analysis = Analysis(until=until) if until is not None else None
    return Circuit("test", ground, tuple(elements), tuple(couplings), analysis)


def errors(c, code=None, until=None):
    return [d for d in diagnose(c, until) if d.severity == "error" and (code is None or d.code == code)]


def closes_at(t):
    return TimedSchedule(False, ((t, True),))


def opens_at(t):
    return TimedSchedule(True, ((t, False),))


SOURCE = VoltageSource("V1", "in", "gnd", Dc(48.0))


def series_rlc():
    return circuit(
        SOURCE,
        Resistor("R1", "in", "a", 2.0),
        Inductor("L1", "a", "b", 1e-3),
        Capacitor("C1", "b", "gnd", 10e-6),
    )


def ladder(sections=20, lossy=True):
    parts = [VoltageSource("V1", "n0", "gnd", Step(0.0, 1.0)), Resistor("Rs", "n0", "x0", 50.0)]
    prev = "x0"
    for k in range(1, sections + 1):
        if lossy:
            parts += [Inductor(f"L{k}", prev, f"m{k}", 1e-6), Resistor(f"R{k}", f"m{k}", f"x{k}", 0.01)]
        else:
            parts += [Inductor(f"L{k}", prev, f"x{k}", 1e-6)]
        parts.append(Capacitor(f"C{k}", f"x{k}", "gnd", 1e-9))
        prev = f"x{k}"
    parts.append(Resistor("Rload", prev, "gnd", 50.0))
    return circuit(*parts)


# ---------------------------------------------------------------- healthy


@pytest.mark.parametrize("build", [series_rlc, ladder, lambda: ladder(20, lossy=False)])
def test_healthy_circuits_have_no_findings(build):
    # [CDK]: a series RLC and an RLC / LC ladder with every capacitor to ground have
    # no capacitor loop and no inductor cut set, so every C and L is a free state.
    c = build()
    assert diagnose(c) == []
    assert verify(c) == []


# ---------------------------------------------------------------- ground and nodes


def test_missing_ground_is_reported():
    # [NR4]: nodal analysis needs a reference node.
    c = circuit(SOURCE, Resistor("R1", "in", "gnd", 1.0), ground=None)
    with pytest.raises(NoGroundError) as info:
        verify(c)
    assert "ground" in info.value.diagnostics[0].fix


def test_ground_on_no_element_is_reported():
    c = circuit(SOURCE, Resistor("R1", "in", "gnd", 1.0), ground="earth")
    found = errors(c, "no-ground")
    assert len(found) == 1 and "earth" in found[0].message
    # the fix suggests real node names
    assert "gnd" in found[0].fix


def test_dangling_node_names_element_and_suggests_spelling():
    # common practice: a node reached by one terminal is almost always a misspelt name.
    c = circuit(
        SOURCE,
        Resistor("R1", "in", "link", 1.0),
        Capacitor("C1", "link", "gnd", 1e-6),
        Resistor("R2", "lnk", "gnd", 1e3),
    )
    found = errors(c, "unconnected-node")
    assert [d.elements for d in found] == [("R2", "lnk")]
    assert "link" in found[0].fix
    with pytest.raises(UnconnectedNodeError):
        verify(c)


def test_element_on_one_node_is_a_warning():
    c = circuit(*series_rlc().elements, Resistor("Rx", "a", "a", 5.0))
    found = diagnose(c)
    assert [(d.code, d.severity, d.elements[0]) for d in found] == [("unconnected-node", "warning", "Rx")]
    assert verify(c) == found


def test_where_of_first_element_is_carried():
    place = Where("demo.cnet", 7, 3, "resistor R2 lnk -- gnd 1 k")
    c = circuit(SOURCE, Resistor("R1", "in", "gnd", 1.0), Resistor("R2", "lnk", "gnd", 1e3, where=place))
    assert errors(c, "unconnected-node")[0].where == place


# ---------------------------------------------------------------- floating parts


def transformer(tied: bool):
    parts = [
        SOURCE,
        Resistor("Rp", "in", "p", 0.1),
        Inductor("Lp", "p", "gnd", 1e-3),
        Inductor("Ls", "s1", "s2", 4e-3),
        Resistor("Rload", "s1", "s2", 10.0),
    ]
    if tied:
        parts.append(Resistor("Rtie", "s2", "gnd", 1e9))
    return circuit(*parts, couplings=(Coupling("M", "Lp", "Ls", 0.95),))


def test_magnetically_coupled_secondary_floats():
    # [NR4]: the secondary's node voltages have no reference; magnetic coupling is no path.
    found = errors(transformer(tied=False))
    assert [d.code for d in found] == ["floating-part"]
    assert set(found[0].elements) == {"Ls", "Rload"}
    assert "s1" in found[0].message and "s2" in found[0].message
    with pytest.raises(FloatingPartError):
        verify(transformer(tied=False))
    assert errors(transformer(tied=True)) == []


def double_contactor(off_resistance=None):
    # a DC link switched in both poles: both contactors open at the start
    return circuit(
        SOURCE,
        Resistor("R_pack", "in", "s", 0.05),
        Switch("K_pos", "s", "lp", closes_at(1e-3), off_resistance=off_resistance),
        Switch("K_neg", "gnd", "ln", closes_at(1e-3), off_resistance=off_resistance),
        Capacitor("C_link", "lp", "ln", 1e-3),
        Resistor("R_load", "lp", "ln", 100.0),
    )


def test_link_behind_two_open_contactors_floats_from_the_start():
    found = errors(double_contactor())
    assert [d.code for d in found] == ["floating-part"]
    assert set(found[0].elements) == {"C_link", "R_load", "K_pos", "K_neg"}
    assert "from the start" in found[0].message
    assert errors(double_contactor(off_resistance=1e8)) == []


def test_part_that_floats_later_reports_the_time():
    c = circuit(
        SOURCE,
        Switch("K", "in", "a", opens_at(3e-3)),
        Resistor("R1", "a", "b", 1.0),
        Capacitor("C1", "b", "a", 1e-6),
    )
    found = errors(c, "floating-part")
    assert len(found) == 1 and "3 ms" in found[0].message and "K opens" in found[0].message
    assert errors(c, "floating-part", until=2e-3) == []


# ---------------------------------------------------------------- loops


def test_capacitor_directly_across_source():
    # [CDK]: a loop of a voltage source and a capacitor fixes the capacitor voltage.
    c = circuit(SOURCE, Capacitor("C1", "in", "gnd", 1e-6), Resistor("R1", "in", "gnd", 1.0))
    found = errors(c)
    assert [(d.code, set(d.elements)) for d in found] == [("capacitor-loop", {"V1", "C1"})]
    assert "ESR" in found[0].fix and "internal resistance of V1" in found[0].fix


def paralleled(on_resistance=None, at=2e-3):
    return circuit(
        SOURCE,
        Resistor("R1", "in", "a", 1.0),
        Capacitor("C1", "a", "gnd", 100e-6, initial_voltage=48.0),
        Switch("K", "a", "b", closes_at(at), on_resistance=on_resistance),
        Capacitor("C2", "b", "gnd", 100e-6, initial_voltage=0.0),
        Resistor("R2", "b", "gnd", 1e3),
    )


def test_switch_paralleling_capacitors_is_left_to_the_run():
    # [CDK]: the closed loop leaves only one free state for the pair, which the state
    # space handles (equations.constraints); whether the voltages differ when K closes is
    # known only at that instant, so the run refuses it there with the charge and energy
    # (tests/test_switching.py).  A loop that holds a voltage source stays an error.
    assert errors(paralleled()) == []
    with_source = circuit(
        SOURCE,
        Switch("K", "in", "b", closes_at(2e-3)),
        Capacitor("C2", "b", "gnd", 100e-6),
        Resistor("R2", "b", "gnd", 1e3),
    )
    found = errors(with_source)
    assert [d.code for d in found] == ["capacitor-loop"]
    assert set(found[0].elements) == {"V1", "C2", "K"}
    assert "2 ms" in found[0].message and "K closes" in found[0].message
    assert "on-resistance" in found[0].fix
    with pytest.raises(CapacitorLoopError) as info:
        verify(with_source)
    assert info.value.diagnostics == tuple(found)


def test_paralleling_through_on_resistance_or_after_the_run_is_fine():
    assert errors(paralleled(on_resistance=10e-3)) == []
    # the switch closes after the run ends: the loop is never reached
    assert errors(paralleled(at=2e-3), until=1e-3) == []
    assert errors(circuit(*paralleled().elements, until=1e-3)) == []


def test_shorted_sources():
    # [AS2]: a source across a short, or two parallel sources, break KVL or leave the current free.
    same_node = circuit(VoltageSource("V1", "in", "in", Dc(1.0)), Resistor("R", "in", "gnd", 1.0),
                        Resistor("R2", "in", "gnd", 1.0))
    assert [d.elements for d in errors(same_node)] == [("V1",)]
    shorted = circuit(SOURCE, Resistor("R", "in", "gnd", 1.0), Switch("K", "in", "gnd", closes_at(1e-3)))
    found = errors(shorted)
    assert [(d.code, set(d.elements)) for d in found] == [("shorted-source", {"V1", "K"})]
    assert "1 ms" in found[0].message
    with pytest.raises(ShortedSourceError):
        verify(shorted)
    parallel = circuit(SOURCE, VoltageSource("V2", "in", "gnd", Dc(12.0)), Resistor("R", "in", "gnd", 1.0))
    assert [(d.code, set(d.elements)) for d in errors(parallel)] == [("shorted-source", {"V1", "V2"})]


def test_two_closed_ideal_switches_in_parallel_warn():
    c = circuit(
        SOURCE,
        Resistor("R", "in", "a", 1.0),
        Switch("K1", "a", "gnd", opens_at(1.0)),
        Switch("K2", "a", "gnd", opens_at(1.0)),
    )
    found = diagnose(c)
    assert [(d.code, d.severity, set(d.elements)) for d in found] == [("switch-loop", "warning", {"K1", "K2"})]


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 5), st.integers(0, 5)), min_size=1, max_size=10))
def test_number_of_capacitor_loops_is_the_cyclomatic_number(edges):
    # [DEO]: e - n + c independent loops; each one holds a capacitor here, so each is reported once.
    nodes = [f"n{k}" for k in range(6)]
    parts = [Capacitor(f"C{k}", nodes[a], nodes[b], 1e-6) for k, (a, b) in enumerate(edges)]
    parts += [Resistor(f"R{k}", n, "gnd", 1.0) for k, n in enumerate(nodes)]
    g = nx.MultiGraph()
    g.add_edges_from((a, b) for a, b in edges)
    nullity = g.number_of_edges() - g.number_of_nodes() + nx.number_connected_components(g)
    assert len(errors(circuit(*parts), "capacitor-loop")) == nullity


# ---------------------------------------------------------------- cut sets


def interrupted(off_resistance=None):
    return circuit(
        SOURCE,
        Resistor("R1", "in", "a", 1.0),
        Inductor("L1", "a", "b", 1e-3),
        Switch("K", "b", "c", opens_at(5e-3), off_resistance=off_resistance),
        Resistor("R2", "c", "gnd", 1.0),
    )


def test_inductor_behind_an_open_switch_is_left_to_the_run():
    # [NR6]: the inductor current cannot be broken in zero time (v = L di/dt); while K is
    # open it is held at 0 (one state fewer), so the configuration itself is no error.
    # Whether K opens on a current is known only at that instant: the run refuses it there
    # (tests/test_switching.py).
    assert errors(interrupted()) == []
    assert errors(interrupted(off_resistance=1e6)) == []


def test_series_inductors_with_nothing_at_the_junction():
    # [CDK]: the two currents are equal by KCL, so only one is a free state.
    c = circuit(
        SOURCE,
        Resistor("R1", "in", "a", 1.0),
        Inductor("L1", "a", "m", 1e-3),
        Inductor("L2", "m", "b", 1e-3),
        Capacitor("C1", "b", "gnd", 1e-6),
    )
    found = errors(c)
    assert [(d.code, d.elements) for d in found] == [("inductor-cutset", ("L1", "L2"))]
    assert "merge" in found[0].fix


def test_current_source_into_an_opening_switch():
    # [AS2]: a current source needs a path; alone in a cut set KCL cannot hold.
    c = circuit(
        CurrentSource("I1", "gnd", "a", Dc(1.0)),
        Switch("K", "a", "b", opens_at(1e-3)),
        Resistor("R", "b", "gnd", 1.0),
    )
    found = errors(c)
    assert [(d.code, set(d.elements)) for d in found] == [("inductor-cutset", {"I1", "K"})]


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 4), st.integers(0, 4), st.booleans()), min_size=1, max_size=9))
def test_cutset_found_exactly_when_a_brute_force_search_finds_one(edges):
    # Definition of a cut set (Deo, chapter on cut sets, from memory): the edges between a node
    # set S and the rest.  Brute force over every S without ground, against the graph search.
    nodes = ["gnd", "n1", "n2", "n3", "n4"]
    parts = [
        (Inductor if is_l else Resistor)(f"E{k}", nodes[a], nodes[b], 1.0) for k, (a, b, is_l) in enumerate(edges)
    ]
    brute = False
    for r in range(1, len(nodes)):
        for s in itertools.combinations(nodes[1:], r):
            crossing = [e for e in parts if (e.first in s) != (e.second in s)]
            if crossing and all(isinstance(e, Inductor) for e in crossing):
                brute = True
    found = diagnose(circuit(*parts))
    reported = any(d.code == "inductor-cutset" for d in found) or any(
        d.code == "unconnected-node" and d.severity == "error" and d.elements[0].startswith("E")
        and isinstance(next(e for e in parts if e.name == d.elements[0]), Inductor)
        for d in found
    )
    assert reported == brute


# ---------------------------------------------------------------- couplings


def coupled(*couplings, inductances=(1e-3, 1e-3, 1e-3)):
    parts = [SOURCE]
    for k, value in enumerate(inductances, start=1):
        parts += [Resistor(f"R{k}", "in", f"x{k}", 1.0), Inductor(f"L{k}", f"x{k}", "gnd", value)]
    return circuit(*parts, couplings=couplings)


@pytest.mark.parametrize(
    "coupling, words",
    [
        (Coupling("M", "L1", "L2", 1.0), "outside"),
        (Coupling("M", "L1", "L2", -1.5), "outside"),
        (Coupling("M", "L1", "L2", math.nan), "outside"),
        (Coupling("M", "L1", "R1", 0.5), "not an inductor"),
        (Coupling("M", "L1", "L9", 0.5), "not an element"),
        (Coupling("M", "L1", "L1", 0.5), "itself"),
    ],
)
def test_bad_single_coupling(coupling, words):
    # [NR6]: |k| <= 1 from stored energy; |k| = 1 makes the inductance matrix singular.
    c = coupled(coupling)
    found = errors(c)
    assert [d.code for d in found] == ["bad-coupling"] and words in found[0].message
    with pytest.raises(BadCouplingError):
        verify(c)


def test_tight_valid_coupling_and_duplicate_pair():
    assert errors(coupled(Coupling("M", "L1", "L2", 0.99))) == []
    twice = errors(coupled(Coupling("M", "L1", "L2", 0.5), Coupling("N", "L2", "L1", 0.5)))
    assert [d.elements[0] for d in twice] == ["N"]


@pytest.mark.parametrize("k12, k13, k23", [(0.9, 0.9, -0.9), (-0.5, -0.5, -0.5), (-0.45, -0.45, -0.45), (0.6, 0.6, 0.6)])
def test_inductance_matrix_must_be_positive_definite(k12, k13, k23):
    # [STR]: Sylvester's criterion, evaluated exactly with sympy as the reference.
    Lv = (1e-3, 2e-3, 3e-3)
    M = sympy.Matrix(3, 3, lambda i, j: sympy.nsimplify(Lv[i]) if i == j else 0)
    for (i, j), k in {(0, 1): k12, (0, 2): k13, (1, 2): k23}.items():
        M[i, j] = M[j, i] = sympy.nsimplify(k) * sympy.sqrt(sympy.nsimplify(Lv[i] * Lv[j]))
    definite = all(M[:n, :n].det() > 0 for n in (1, 2, 3))
    c = coupled(
        Coupling("M12", "L1", "L2", k12), Coupling("M13", "L1", "L3", k13), Coupling("M23", "L2", "L3", k23),
        inductances=Lv,
    )
    found = errors(c)
    assert (found == []) == definite
    if not definite:
        assert set(found[0].elements) == {"M12", "M13", "M23", "L1", "L2", "L3"}


# ---------------------------------------------------------------- values and names


@pytest.mark.parametrize(
    "element",
    [
        Resistor("X", "in", "gnd", -1.0),
        Capacitor("X", "in", "gnd", 0.0),
        Inductor("X", "in", "gnd", math.nan),
        Switch("X", "in", "gnd", opens_at(1e-3), on_resistance=0.0),
        Switch("X", "in", "gnd", TimedSchedule(False, ((-1e-3, True),)), on_resistance=1.0),
        Switch("X", "in", "gnd", TimedSchedule(False, ((2e-3, True), (1e-3, False))), on_resistance=1.0),
        Switch("X", "in", "gnd", PeriodicSchedule(1e-3, 1.0), on_resistance=1.0),
        Switch("X", "in", "gnd", PeriodicSchedule(0.0, 0.5), on_resistance=1.0),
    ],
)
def test_bad_values(element):
    c = circuit(SOURCE, Resistor("R", "in", "gnd", 1.0), element)
    found = [d for d in errors(c) if d.code == "bad-value"]
    assert len(found) == 1 and found[0].elements == ("X",)
    with pytest.raises(BadValueError):
        verify(c)


def test_duplicate_names_point_at_the_second_use():
    second = Where("d.cnet", 4, 1, "capacitor R1 in -- gnd 1 uF")
    c = circuit(SOURCE, Resistor("R1", "in", "gnd", 1.0), Capacitor("R1", "in", "x", 1e-6, where=second),
                Resistor("R2", "x", "gnd", 1.0))
    with pytest.raises(DuplicateNameError) as info:
        verify(c)
    assert info.value.diagnostics[0].where == second


def test_verify_carries_every_error_and_names_the_first():
    c = circuit(*paralleled().elements, Capacitor("Cv", "in", "gnd", 1e-6), Resistor("Rx", "a", "nowhere", 1.0))
    with pytest.raises(UnconnectedNodeError) as info:
        verify(c)
    assert [d.code for d in info.value.diagnostics] == ["unconnected-node", "capacitor-loop"]
    assert isinstance(info.value, CircuitodeError) and "fix:" in str(info.value)


# ---------------------------------------------------------------- DC steady state


def test_explain_singular_dc():
    # At DC a capacitor is an open and an inductor a short (Nilsson & Riedel ch. 6, from memory);
    # [CDK] an L-V loop or a C-I cut set then leaves a current or a voltage free.
    c = circuit(
        SOURCE,
        Inductor("L1", "in", "gnd", 1e-3),
        Capacitor("C1", "in", "m", 1e-6),
        Capacitor("C2", "m", "gnd", 1e-6),
    )
    text = explain_singular_dc(c, ())
    assert "L1 and V1" in text and "node m" in text and "C1 and C2" in text
    healthy = explain_singular_dc(series_rlc(), ())
    assert healthy == ""
    shunted = circuit(SOURCE, Resistor("R", "in", "a", 1.0), Inductor("L1", "a", "gnd", 1e-3),
                      Switch("K", "a", "gnd", closes_at(1e-3)))
    assert "K" in explain_singular_dc(shunted, (True,)) and explain_singular_dc(shunted, (False,)) == ""
    with pytest.raises(CircuitodeError):
        explain_singular_dc(shunted, (True, False))


def test_island_with_an_internal_switch_is_reported_once():
    c = circuit(
        SOURCE,
        Resistor("R", "in", "gnd", 1.0),
        Resistor("Ra", "p", "q", 1.0),
        Switch("K", "q", "r", opens_at(1e-3)),
        Resistor("Rb", "r", "p", 1.0),
    )
    found = errors(c)
    assert [(d.code, set(d.elements)) for d in found] == [("floating-part", {"Ra", "Rb", "K"})]
    assert "at all" in found[0].message


def test_docstring_examples_run():
    # the examples in the module's docstrings are part of its documentation; they must hold
    import doctest

    import circuitode.checks.topology as topology

    result = doctest.testmod(topology)
    assert result.attempted >= 3 and result.failed == 0


element_specs = st.lists(
    st.tuples(st.sampled_from("RCLVIS"), st.integers(0, 4), st.integers(0, 4), st.booleans(), st.booleans()),
    min_size=1, max_size=9,
)


@settings(max_examples=60, deadline=None)
@given(element_specs)
def test_verdict_agrees_with_nodal_assembly(specs):
    # Common practice: modified nodal analysis of the companion network (capacitors as voltage
    # sources, inductors as current sources) has a unique solution exactly when there is no
    # floating part, no C/V/short loop and no L/I/open cut set.  Cross-check against the
    # state-space stage for circuits whose switches hold their state through the run.
    from circuitode.errors import SingularSystemError
    from circuitode.equations.statespace import assemble

    nodes = ["gnd", "n1", "n2", "n3", "n4"]
    parts = []
    for k, (kind, a, b, flag, flag2) in enumerate(specs):
        name, first, second = f"{kind}{k}", nodes[a], nodes[b]
        parts.append({
            "R": lambda: Resistor(name, first, second, 1.0),
            "C": lambda: Capacitor(name, first, second, 1e-6),
            "L": lambda: Inductor(name, first, second, 1e-3),
            "V": lambda: VoltageSource(name, first, second, Dc(1.0)),
            "I": lambda: CurrentSource(name, first, second, Dc(1.0)),
            "S": lambda: Switch(name, first, second, TimedSchedule(flag, ()), off_resistance=1e6 if flag2 else None),
        }[kind]())
    c = circuit(*parts)
    codes = {d.code for d in diagnose(c) if d.severity == "error"}
    # skip: no reference at all, or a dangling terminal (an error here, often harmless to the algebra)
    assume(not codes & {"no-ground", "unconnected-node"})
    try:
        assemble(c, tuple(s.initially_closed for s in c.switches))
        singular = False
    except SingularSystemError:
        singular = True
    assert singular == bool(codes)


def test_dc_explanation_exactly_when_the_state_matrix_is_singular():
    # At DC (A x = -B u) the steady state is unique iff A is invertible; A is singular exactly
    # when a loop of L/V/shorts or a cut set of C/I/opens exists ([CDK], from memory).  A seeded
    # sweep of small random circuits that pass the topology checks, against the rank of A
    # from the state-space stage.
    import random

    import numpy as np

    from circuitode.equations.statespace import assemble

    nodes = ["gnd", "n1", "n2", "n3", "n4"]
    rng = random.Random(3)
    singular_seen = regular_seen = 0
    for _ in range(2000):
        parts = []
        for k in range(rng.randint(1, 9)):
            kind, a, b = rng.choice("RCLVIS"), rng.choice(nodes), rng.choice(nodes)
            name = f"{kind}{k}"
            parts.append({
                "R": lambda: Resistor(name, a, b, rng.choice([1.0, 2.0])),
                "C": lambda: Capacitor(name, a, b, 1.0),
                "L": lambda: Inductor(name, a, b, 1.0),
                "V": lambda: VoltageSource(name, a, b, Dc(1.0)),
                "I": lambda: CurrentSource(name, a, b, Dc(1.0)),
                "S": lambda: Switch(name, a, b, TimedSchedule(rng.random() < 0.5, ()),
                                    on_resistance=rng.choice([None, 1.0])),
            }[kind]())
        c = circuit(*parts)
        if errors(c):
            continue
        closed = tuple(s.initially_closed for s in c.switches)
        A = assemble(c, closed).A_free  # the configuration's own states (held ones excluded)
        if A.shape[0] == 0:
            continue
        singular = np.linalg.matrix_rank(A, tol=1e-9) < A.shape[0]
        assert singular == bool(explain_singular_dc(c, closed)), [(type(e).__name__, e.name, e.first, e.second) for e in parts]
        singular_seen += singular
        regular_seen += not singular
    assert singular_seen > 20 and regular_seen > 20  # both outcomes were exercised


def test_switched_verdict_agrees_with_assembly_in_every_reachable_configuration():
    # Same common-practice fact as above, now with timed, periodic and threshold switches:
    # the checks report an error exactly when some reachable configuration cannot be assembled.
    import random

    from circuitode.errors import SingularSystemError
    from circuitode.equations.statespace import assemble

    nodes = ["gnd", "n1", "n2", "n3", "n4"]
    rng = random.Random(5)
    outcomes = set()
    for _ in range(600):
        parts = []
        for k in range(rng.randint(2, 9)):
            kind, a, b = rng.choice("RRCLVISS"), rng.choice(nodes), rng.choice(nodes)
            name = f"{kind}{k}"
            control = rng.choice([
                closes_at(1e-3 * rng.randint(1, 5)),
                opens_at(1e-3 * rng.randint(1, 5)),
                PeriodicSchedule(1e-3, 0.5, 1e-3 * rng.randint(0, 3)),
                ThresholdRule(True, NodeVoltage("n1"), True, 1.0),
            ])
            parts.append({
                "R": lambda: Resistor(name, a, b, 1.0),
                "C": lambda: Capacitor(name, a, b, 1.0),
                "L": lambda: Inductor(name, a, b, 1.0),
                "V": lambda: VoltageSource(name, a, b, Dc(1.0)),
                "I": lambda: CurrentSource(name, a, b, Dc(1.0)),
                "S": lambda: Switch(name, a, b, control, on_resistance=rng.choice([None, 1.0]),
                                    off_resistance=rng.choice([None, 1e6])),
            }[kind]())
        c = circuit(*parts, until=10e-3)
        codes = {d.code for d in errors(c)}
        if codes & {"no-ground", "unconnected-node"}:
            continue
        singular = False
        for cfg in reachable_configurations(c):
            try:
                assemble(c, cfg.closed)
            except SingularSystemError:
                singular = True
        assert singular == bool(codes), [(type(e).__name__, e.name, e.first, e.second) for e in parts]
        outcomes.add(singular)
    assert outcomes == {True, False}
