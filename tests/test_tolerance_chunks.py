"""A batch of a million samples is cut into chunks whose memory does not grow with the batch.

The plan of a 10⁶-sample batch is computed, and three of its chunks (first, middle,
last) are run as a worker runs them (``run_chunk`` on the chunk's rows of the
10⁶-sample table), each with its peak traced memory measured by tracemalloc (numpy
reports its arrays to it).  The whole batch is not run: the claim is per chunk.
"""
import tracemalloc

import numpy as np

from circuitode.netlist import loads
from circuitode.tolerance.batch import _BYTES_PER_CHUNK, batch_figure_keys, plan_chunks, run_chunk
from circuitode.tolerance.sampling import draw_samples, spreads_with_overrides

# 8 ms at 1 µs: 8,001 rows a sample, so the chunk is bounded by memory, not by the 4,096 cap
RC_LONG = """
circuit "RC inrush, long record"
param R_c = 10 Ω ± 10 %
param C_c = 10 uF ± 20 % uniform
ground gnd
voltage_source V1 rail -- gnd constant 12 V
switch K1 rail -- s closes at 0.1 ms
resistor R1 s -- out R_c
capacitor C1 out -- gnd C_c initial 0 V
resistor R_bleed out -- gnd 10 kΩ
transient until 8 ms step 1 us method exact initial given
record voltage at out, current through R1
"""

MILLION = 1_000_000


def test_million_sample_batch_runs_in_chunks_of_bounded_memory():
    circuit = loads(RC_LONG)
    probes, keys = batch_figure_keys(circuit)
    size, count = plan_chunks(circuit, MILLION, len(probes))
    assert size * (count - 1) < MILLION <= size * count
    assert 16 <= size < 4096  # bounded by the memory budget here
    # the chunk does not depend on the batch: the same for 10⁴ and 10⁶ samples
    assert plan_chunks(circuit, 10_000, len(probes))[0] == size
    table = draw_samples(spreads_with_overrides(circuit, []), MILLION, "lhs", 3)
    assert table.values.shape == (MILLION, 2)  # the driver's table: 16 MB, not waveforms
    peaks = {}
    for c in (0, count // 2, count - 1):
        rows = slice(c * size, min(MILLION, (c + 1) * size))
        task = {"circuit": circuit, "names": table.names, "start": c * size, "values": table.values[rows],
                "keys": keys, "probes": probes, "method": "exact", "keep_waveforms": 0}
        tracemalloc.start()
        try:
            out = run_chunk(task)
            peaks[c] = tracemalloc.get_traced_memory()[1]
        finally:
            tracemalloc.stop()
        n = rows.stop - rows.start
        assert out["ok"].all() and out["figures"].shape == (n, len(keys))
        # final value of an RC charge through R_c into C ∥ 10 kΩ: the divider
        # 12 V · 10 kΩ / (10 kΩ + R_c) (Nilsson & Riedel, ch. 7, step response of RC circuits)
        j = keys.index(("final", "voltage at out"))
        r_c = table.values[rows, table.names.index("R_c")]
        assert np.allclose(out["figures"][:, j], 12.0 * 1e4 / (1e4 + r_c), rtol=1e-6)
        print(f"chunk {c} of {count}: {n} samples, peak traced memory {peaks[c] / 1e6:.0f} MB")
        assert peaks[c] <= _BYTES_PER_CHUNK, f"chunk {c}: {peaks[c] / 1e6:.0f} MB"
    # a full chunk's peak is the same wherever it sits in the batch (nothing accumulates)
    assert peaks[count // 2] <= 1.1 * peaks[0]
