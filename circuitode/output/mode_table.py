"""The damping table of ``circuitode modes``: text within 80 columns and its JSON form.

Columns are kept apart by at least one space whatever the numbers; ζ is printed
to three significant digits (a lightly damped cable mode reads 0.00226, not
0.000); a first-order mode shows its time constant only (its "frequency" |λ|/2π
and ζ = 1 describe no ringing).  The "mainly" line names the states that form
the mode, or, when the mode is spread over many states, how many and the two
largest shares.
"""
from __future__ import annotations

import math
from typing import Any, Sequence

from ..quantities import format_si

__all__ = ["heading_lines", "modes_text", "mode_words", "modes_json", "write_modes_json", "zeta_words", "q_words"]

WIDTH = 80
#: Least participation for a state to be named as forming a mode.
NAMED_SHARE = 0.1
#: Class words shown in the table (the JSON keeps the analysis' own words).
_SHORT_KIND = {"aperiodic (first-order)": "first-order decay"}


def _fit(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


def heading_lines(title: str, path: str | None) -> list[str]:
    """The heading of check, run and modes: "title  (path)" when it fits 80 columns, else the
    path on a line of its own, cut at its start if need be (its file name is what tells)."""
    line = title + (f"  ({path})" if path else "")
    if len(line) <= WIDTH or not path:
        return [_fit(line, WIDTH)]
    shown = path if len(path) + 2 <= WIDTH else "…" + path[-(WIDTH - 3):]
    return [_fit(title, WIDTH), f"({shown})"]


def _wrap(text: str, indent: str) -> list[str]:
    import textwrap

    return textwrap.wrap(text, width=WIDTH, initial_indent=indent, subsequent_indent=indent) or [indent]


def zeta_words(zeta: float) -> str:
    """ζ to three significant digits ("0.00226", "0.575", "1"), "—" when undefined."""
    if math.isnan(zeta):
        return "—"
    return f"{zeta:.3g}"


def q_words(q: float) -> str:
    """Q to three significant digits without an exponent below a million ("1080", "0.87")."""
    if math.isnan(q):
        return "—"
    if math.isinf(q):
        return "∞"
    if abs(q) < 1000:
        return f"{q:.3g}"
    if abs(q) < 1e6:
        return f"{float(f'{q:.3g}'):.0f}"
    return f"{q:.1e}"


def mode_words(participation: Sequence[tuple[str, float]]) -> str:
    """What forms a mode: the states with at least 10 % of it (at most three), else how widely it is spread.

    ``participation`` is ((state name, share), …) sorted by share, shares summing to 1.
    """
    named = [(n, w) for n, w in participation if w >= NAMED_SHARE][:3]
    if named and sum(w for _, w in named) >= 0.5:
        return "mainly " + ", ".join(f"{n} {w * 100:.0f} %" for n, w in named)
    top = ", ".join(f"{n} {w * 100:.0f} %" for n, w in participation[:2])
    significant = sum(1 for _, w in participation if w >= 0.01)
    return f"spread over {significant} states (≥ 1 % each); largest: {top}"


def _row(mode: Any) -> str:
    lam = mode.eigenvalue
    if lam.imag:
        eig = f"{lam.real:.3g} ± {abs(lam.imag):.3g}j"
    else:  # a first-order mode, or both real roots of an overdamped L–C section
        eig = ", ".join(f"{complex(r).real:.3g}" for r in mode.eigenvalues)
    tau = "∞" if math.isinf(mode.time_constant) else format_si(mode.time_constant, "s", 3)
    kind = _SHORT_KIND.get(mode.kind, mode.kind)
    if mode.order == 1:  # no ringing: only the time constant describes it
        fn = zeta = q = ""
    else:
        fn = format_si(mode.natural_frequency_hz, "Hz", 3)
        zeta = zeta_words(mode.damping_ratio)
        q = q_words(mode.quality_factor)
    return f"  {_fit(eig, 21):<21} {fn:>9} {zeta:>8} {q:>7} {tau:>8}  {kind}"


def modes_text(configurations: Sequence[Any], path: str | None = None, title: str = "",
               caution: str = "") -> str:
    """The damping table of ``circuitode modes``, one block per switch configuration.

    Parameters
    ----------
    configurations : :class:`circuitode.analysis.modes.ConfigurationModes`, in order.
    path, title : shown in the heading line.
    caution : a closing line (the safety caution), wrapped to 80 columns.
    """
    out = []
    if title or path:
        out.extend(heading_lines(title, path))
    for cfg in configurations:
        out.append("")
        when = "" if math.isnan(cfg.first_time) else f" from {format_si(cfg.first_time, 's')}"
        out.extend(_wrap(f"configuration: {cfg.description}{when}" + (f" ({cfg.cause})" if cfg.cause else ""),
                         indent=""))
        if cfg.states is not None:
            out.extend(_wrap(f"{len(cfg.states)} state{'' if len(cfg.states) == 1 else 's'}: "
                             + (", ".join(cfg.states) or "none"), indent="  "))
            for d in cfg.dependent:
                out.extend(_wrap(d, indent="    "))
        if cfg.note:
            out.extend(_wrap(cfg.note, indent="  "))
        if not cfg.modes:
            out.append("  no dynamic states in this configuration")
            continue
        out.append(f"  {'eigenvalue 1/s':<21} {'fn':>9} {'ζ':>8} {'Q':>7} {'τ':>8}  class")
        for m in cfg.modes:
            out.append(_row(m))
            out.extend(_wrap(mode_words(m.participation), indent=" " * 6))
    if caution:
        out.append("")
        out.extend(_wrap(caution, indent=""))
    return "\n".join(out)


def modes_json(configurations: Sequence[Any]) -> list[dict[str, Any]]:
    """The table as plain data: one entry per configuration with its modes (SI numbers, shares 0–1)."""
    from ..analysis.modes import mode_rows

    out = []
    for cfg in configurations:
        rows = mode_rows(cfg.modes)
        for row, mode in zip(rows, cfg.modes):
            row["participation"] = {name: float(w) for name, w in mode.participation if w >= 0.01}
            if mode.order == 1:  # a first-order mode does not ring: no frequency, ζ or Q to report
                for key in ("natural_frequency", "natural_frequency_hz", "damping_ratio", "quality_factor"):
                    row[key] = None
        out.append({
            "configuration": cfg.description,
            "closed": list(cfg.closed),
            "first_time_s": None if math.isnan(cfg.first_time) else float(cfg.first_time),
            "cause": cfg.cause,
            "states": None if cfg.states is None else list(cfg.states),
            "held_or_tied": list(cfg.dependent),
            "note": cfg.note,
            "modes": rows,
        })
    return out


def write_modes_json(path: Any, configurations: Sequence[Any], circuit: Any) -> None:
    """Write the table as JSON to ``path`` ("-" prints it), with the circuit, the units and the safety text."""
    import json
    import sys
    from pathlib import Path

    from .report import SAFETY_TEXT, json_ready

    body = {
        "circuit": circuit.title,
        "netlist": circuit.source_file,
        "units": {"eigenvalue": "1/s", "natural_frequency": "rad/s", "natural_frequency_hz": "Hz",
                  "damped_frequency_hz": "Hz", "time_constant": "s", "damping_ratio": "1", "quality_factor": "1",
                  "participation": "share of the mode, 0 to 1"},
        "configurations": modes_json(configurations),
        "safety": SAFETY_TEXT,
    }
    text = json.dumps(json_ready(body), indent=2, ensure_ascii=False)
    if str(path) == "-":
        sys.stdout.write(text + "\n")
        return
    Path(path).write_text(text + "\n", encoding="utf-8")
