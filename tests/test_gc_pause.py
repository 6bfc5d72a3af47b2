"""circuitode/gc_pause.py: the cyclic collector is paused during the work and left as it was found."""
import gc

import pytest

from circuitode.errors import NetlistError
from circuitode.gc_pause import collector_paused
from circuitode.netlist.parse import parse_text


def test_paused_during_the_work_and_restarted_after_it_even_on_an_error():
    seen = []

    @collector_paused
    def work(fail):
        seen.append(gc.isenabled())
        if fail:
            raise ValueError("x")
        return 7

    assert gc.isenabled()
    assert work(False) == 7
    with pytest.raises(ValueError):
        work(True)
    assert seen == [False, False] and gc.isenabled()


def test_a_collector_the_caller_stopped_stays_stopped():
    gc.disable()
    try:
        parse_text("ground gnd\nresistor R1 a -- gnd 1 Ω\n")
        with pytest.raises(NetlistError):
            parse_text("ground gnd\nresistor R1 a -- gnd\n")
        assert not gc.isenabled()
    finally:
        gc.enable()
    with pytest.raises(NetlistError):
        parse_text("resistor R1 a -- gnd 1 kΩ ± 5 V\n")
    assert gc.isenabled()
