"""circuitode: switch-on transients, damping and tolerance batches of RLC networks.

The public API, flat::

    import circuitode as co
    circuit = co.load("netlists/precharge.cnet")        # parse + build (SI floats)
    findings = co.diagnose(circuit)                       # topology checks
    waves = co.simulate(circuit, method="exact")          # transient → Waveforms
    figures = co.summarise(waves)                         # peak, I²t, overshoot …
    limits = co.check_requirements(circuit.requirements, waves)
    table = co.circuit_modes(circuit)                     # ζ, ωn, Q per configuration
    job = co.run_job("netlists/precharge.cnet", out_dir="out")   # all of it + files
    grid = co.sweep("netlists/precharge.cnet", {"R_pre": "4.7Ω..100Ω/20/log"})  # .to_frame()
    fit = co.size("netlists/precharge.cnet", "R_pre", "1Ω..1kΩ")   # interval + E24 values
    bench = co.compare_job("netlists/dc_link_ring.cnet", measured="capture.csv",
                           channel=2, quantity="voltage at link")   # a scope capture against it

Heavier pieces (the tolerance engine, plotting) are imported on first use.
"""

__version__ = "0.1.0"

from .errors import (  # noqa: E402
    CircuitodeError,
    IntegrationError,
    NetlistError,
    SingularSystemError,
    TopologyError,
    UnstableStepError,
)

__all__ = [
    "__version__",
    "load",
    "loads",
    "diagnose",
    "verify",
    "simulate",
    "assemble",
    "summarise",
    "run_figure",
    "check_requirements",
    "check_requirements_batch",
    "reachable_configurations",
    "StateSpaceCache",
    "SourceBank",
    "figure_unit",
    "mode_rows",
    "Waveforms",
    "Event",
    "METHODS",
    "choose_method",
    "rk4_stability_limit",
    "format_si",
    "parse_quantity",
    "analyse_modes",
    "circuit_modes",
    "run_job",
    "run_batch",
    "sweep",
    "size",
    "waveform_figure",
    "read_run",
    "read_batch",
    "read_sweep",
    "read_capture",
    "circuit_response",
    "response_job",
    "compare_job",
    "fit_job",
    "CircuitodeError",
    "NetlistError",
    "TopologyError",
    "SingularSystemError",
    "IntegrationError",
    "UnstableStepError",
]

_LAZY = {
    "load": ("netlist", "load"),
    "loads": ("netlist", "loads"),
    "diagnose": ("checks.topology", "diagnose"),
    "verify": ("checks.topology", "verify"),
    "assemble": ("equations.statespace", "assemble"),
    "summarise": ("analysis.measure", "summarise"),
    "run_figure": ("analysis.windows", "run_figure"),
    "check_requirements": ("analysis.limits", "check_requirements"),
    "check_requirements_batch": ("analysis.limits", "check_requirements_batch"),
    "reachable_configurations": ("model.configurations", "reachable_configurations"),
    "StateSpaceCache": ("equations.statespace", "StateSpaceCache"),
    "SourceBank": ("model.sources", "SourceBank"),
    "figure_unit": ("analysis.measure", "figure_unit"),
    "mode_rows": ("analysis.modes", "mode_rows"),
    "Waveforms": ("transient", "Waveforms"),
    "Event": ("transient", "Event"),
    "METHODS": ("solvers", "METHODS"),
    "choose_method": ("solvers", "choose_method"),
    "rk4_stability_limit": ("solvers", "rk4_stability_limit"),
    "format_si": ("netlist", "format_si"),
    "parse_quantity": ("netlist", "parse_quantity"),
    "analyse_modes": ("analysis.modes", "analyse_modes"),
    "circuit_modes": ("analysis.modes", "circuit_modes"),
    "run_job": ("jobs.run", "run_job"),
    "run_batch": ("tolerance", "run_batch"),
    "sweep": ("studies.sweep", "sweep"),
    "waveform_figure": ("output.plots", "waveform_figure"),
    "read_run": ("output.readback", "read_run"),
    "read_batch": ("output.readback", "read_batch"),
    "read_sweep": ("output.readback", "read_sweep"),
    "size": ("studies.sizing", "size"),
    "read_capture": ("measured.capture", "read_capture"),
    "circuit_response": ("analysis.response", "circuit_response"),
    "response_job": ("jobs.response", "response_job"),
    "compare_job": ("jobs.compare", "compare_job"),
    "fit_job": ("jobs.fit", "fit_job"),
}


def simulate(source, **options):
    """Transient of a Circuit, a ``.cnet`` path or netlist text; returns Waveforms.

    Options (all optional, overriding the netlist's ``transient`` statement):
    method, step (s), until (s), points, initial ("rest" | "given" | "steady"),
    rtol, atol, probes; ``overrides`` replaces param values when loading.
    """
    from .jobs.run import load_any
    from .transient import simulate as _simulate

    circuit = load_any(source, options.pop("overrides", None))
    return _simulate(circuit, **options)


def __getattr__(name):
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        value = getattr(importlib.import_module(f"{__name__}.{module}"), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'circuitode' has no attribute {name!r}")
