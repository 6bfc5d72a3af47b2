"""The ``response`` command end to end: a netlist in, Bode plots, a CSV and resonances out."""
from __future__ import annotations

import csv
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from .run import load_any

__all__ = ["ResponseResult", "response_job"]


@dataclass
class ResponseResult:
    """curves : ResponseCurve per quantity and configuration.  problems : configurations not analysed
    or files not written.  files : kind → path."""

    circuit: Any
    curves: list
    problems: list[str] = field(default_factory=list)
    files: dict[str, Path] = field(default_factory=dict)


def _write_csv(path: Path, curves) -> Path:
    with open(path, "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh)
        out.writerow(["quantity", "configuration", "frequency_Hz", "magnitude", "unit", "phase_deg"])
        for cu in curves:
            for f, m, p in zip(cu.frequency_hz, cu.magnitude, cu.phase_deg):
                out.writerow([cu.label, cu.configuration, f"{f:.9g}", f"{m:.9g}", cu.unit, f"{p:.6f}"])
    return path


def response_job(
    source: Any,
    *,
    from_source: str | None = None,
    to: str | None = None,
    impedance_at: str | None = None,
    overrides: Mapping[str, Any] | None = None,
    until: float | None = None,
    f_min: float | None = None,
    f_max: float | None = None,
    points: int = 801,
    out_dir: str | Path | None = None,
    plots: bool = True,
) -> ResponseResult:
    """Frequency response of a netlist (Circuit, ``.cnet`` path or text).

    ``to`` is a quantity in words ("voltage at out") driven by the source ``from_source``;
    ``impedance_at`` a node.  Writes response.csv and one PNG per quantity into ``out_dir``.
    """
    from ..analysis.response import circuit_response
    from ..netlist.probe_words import probe_from_words

    circuit = load_any(source, overrides)
    probe = probe_from_words(to, circuit, "--to") if to is not None else None
    curves, problems = circuit_response(circuit, source=from_source, probe=probe, impedance_at=impedance_at,
                                        until=until, f_min=f_min, f_max=f_max, points=points)
    result = ResponseResult(circuit, curves, list(problems))
    if out_dir is None or not curves:
        return result
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    result.files["csv"] = _write_csv(out / "response.csv", curves)
    if plots:
        from ..output.response_plots import plot_response

        by_label: dict[str, list] = {}
        for cu in curves:
            by_label.setdefault(cu.label, []).append(cu)
        for n, (label, group) in enumerate(by_label.items()):
            kind = "impedance" if label.startswith("impedance") else "transfer"
            try:
                result.files[f"{kind} plot"] = plot_response(group, out / f"{kind}.png", title=circuit.title)
            except Exception as exc:  # noqa: BLE001 - the CSV is already safe; say what failed
                result.problems.append(f"plot not drawn: {type(exc).__name__}: {exc}")
    return result
