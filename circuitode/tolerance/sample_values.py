"""Which parts of a circuit a batch may vary per sample, and their per-sample values.

Used by the tolerance batch, the design studies (sweeps, sizing) and fitting: one
place says what the batched engine keeps common to every sample.
"""
from __future__ import annotations

from typing import Any, Sequence

import numpy as np

from ..errors import CircuitodeError, NetlistError
from ..model import Circuit, Coupling
from .timed_switches import timing_refusal

__all__ = ["check_supported", "element_values"]


def element_values(circuit: Circuit, names: Sequence[str], block: np.ndarray) -> dict:
    """Per-sample values {(element, field): (N,) array} of every element field whose recipe uses
    one of ``names``, evaluated with block[:, j] as the value of names[j] (SI units)."""
    env: dict[str, Any] = {k: float(v) for k, v in circuit.parameters.items()}
    env.update({n: block[:, j] for j, n in enumerate(names)})
    size = block.shape[0]
    out = {}
    for (element, field_), recipe in circuit.recipes.items():
        if not set(getattr(recipe, "names", ())) & set(names):
            continue
        out[(element, field_)] = np.broadcast_to(np.asarray(recipe.evaluate(env), dtype=float), (size,)).copy()
    return out


def check_supported(circuit: Circuit, names: Sequence[str]) -> None:
    """Source fields may vary per sample only where the waveform is linear in them
    (its levels); of the timing fields only the instant of a switch that moves once
    (or its closing angle) may vary, as a per-sample event (see timed_switches)."""
    from ..equations.mna import VARIABLE_FIELDS
    from ..model.source_batch import LEVEL_FIELDS

    for (element, field_), recipe in circuit.recipes.items():
        varied = sorted(set(getattr(recipe, "names", ())) & set(names))
        if not varied:
            continue
        if "." not in field_:
            owner = circuit.by_name.get(element)
            allowed = ("k",) if isinstance(owner, Coupling) else VARIABLE_FIELDS.get(type(owner), ())
            if field_ not in allowed:
                spread = circuit.spreads.get(varied[0])
                raise NetlistError(
                    f"the tolerance on {varied[0]} reaches the {field_.replace('_', ' ')} of {element}, "
                    "which a batch keeps common to every sample",
                    getattr(spread, "where", None),
                    f"remove the tolerance from {varied[0]}, or give {element} its "
                    f"{field_.replace('_', ' ')} as a fixed value",
                )
            continue
        if field_.startswith("control."):  # a switch's instant may vary (a per-sample event)
            reason = timing_refusal(circuit, element, field_)
            if reason is not None:
                spread = circuit.spreads.get(varied[0])
                raise NetlistError(f"the tolerance on {varied[0]}: {reason}", getattr(spread, "where", None),
                                   f"remove the tolerance from {varied[0]}, or fix the value")
            continue
        source = circuit.by_name.get(element)
        level = field_.split(".", 1)[1]
        kind = type(getattr(source, "waveform", None))
        allowed = LEVEL_FIELDS.get(kind, ())
        if not field_.startswith("waveform.") or level not in allowed:
            from ..netlist.vocabulary import written_field

            words = ", ".join(written_field(kind, a) for a in allowed) or "none for this waveform"
            raise CircuitodeError(
                f"the tolerance on {written_field(kind, level)} of source {element} is not supported in batches: "
                f"switching instants and other timing stay common to every sample; only a "
                f"source's levels ({words}) may vary — remove that tolerance or fix the value"
            )
