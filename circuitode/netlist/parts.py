"""Element values and fields named from outside the netlist: ``R1``, ``K_main.on``, ``pack.value``.

``--set``, ``--tol`` and ``--vary`` accept a parameter name or a *part name*:
an element's name for its main value (resistance, capacitance, inductance),
or ``element.field`` for one of its fields:

=================  ===========================================  ======
part name          field                                        unit
=================  ===========================================  ======
``R1``             resistance of a resistor                     Ω
``C1``, ``L1``     capacitance, inductance                      F, H
``C1.initial``     initial voltage (capacitor) / current (L)    V, A
``K1.on``          on-resistance of a switch                    Ω
``K1.off``         off-resistance of a switch                   Ω
``K1.at``          instant of a switch that moves once          s
``K1.angle``       angle of a switch placed on a sine's angle   rad (deg)
``M1.k``           coupling factor                              (none)
``V1.value``       level of a ``dc`` source                     V, A
``V1.amplitude``   any written field of the source's waveform   by field
=================  ===========================================  ======

:func:`set_parts` replaces such values in a built circuit (``--set``);
:func:`expose_parts` gives each named field a parameter of the same name and a
recipe, so the batch engine can vary it like a toleranced parameter.
"""
from __future__ import annotations

import dataclasses
import difflib
import math
from dataclasses import dataclass
from typing import Any, Iterable, Mapping

from ..errors import NetlistError
from .. import model as cm
from .. import model as src
from . import expressions as ex
from .expressions import did_you_mean
from ..quantities import parse_quantity
from .vocabulary import WAVEFORM_CLASSES, WAVEFORM_FIELDS

__all__ = ["PartField", "part_names", "resolve_part", "set_parts", "expose_parts"]

_ROLE_UNITS = {"s": "s", "Hz": "Hz", "rad": "rad", "count": ""}


@dataclass(frozen=True)
class PartField:
    """One named element field.

    name : as written (``"K_main.on"``).  element : element name.  field : the
    circuit's field path (``"on_resistance"``, ``"waveform.amplitude"``), the key
    of ``Circuit.recipes``.  unit : SI unit of the value ("" for none).
    """

    name: str
    element: str
    field: str
    unit: str


def _fields_of(element: Any) -> dict[str, tuple[str, str]]:
    """Written field word → (field path, unit) of one element; "" is the main value."""
    if isinstance(element, cm.Resistor):
        return {"": ("resistance", "Ω")}
    if isinstance(element, cm.Capacitor):
        return {"": ("capacitance", "F"), "initial": ("initial_voltage", "V")}
    if isinstance(element, cm.Inductor):
        return {"": ("inductance", "H"), "initial": ("initial_current", "A")}
    if isinstance(element, cm.Switch):
        fields = {"on": ("on_resistance", "Ω"), "off": ("off_resistance", "Ω")}
        control = element.control
        if isinstance(control, cm.AngleSchedule):
            fields["angle"] = ("control.angle", "rad")
        elif isinstance(control, cm.TimedSchedule) and len(control.changes) == 1:
            fields["at"] = ("control.changes.0", "s")
        return fields
    if isinstance(element, cm.Coupling):
        return {"k": ("k", "")}
    if isinstance(element, (cm.VoltageSource, cm.CurrentSource)):
        signal = "V" if isinstance(element, cm.VoltageSource) else "A"
        wave = element.waveform
        if isinstance(wave, src.Dc):
            return {"value": ("waveform.value", signal)}
        kind = next((k for k, cls in WAVEFORM_CLASSES.items() if isinstance(wave, cls)), None)
        if kind is None:
            return {}
        return {word: (f"waveform.{attr}", signal if role == "signal" else _ROLE_UNITS.get(role, role))
                for word, (attr, role, _default) in WAVEFORM_FIELDS[kind].items()}
    return {}


def part_names(circuit: cm.Circuit) -> list[str]:
    """Every part name the circuit offers (``R1``, ``K_main.on``, ``pack.value`` …)."""
    names = []
    for element in (*circuit.elements, *circuit.couplings):
        for word in _fields_of(element):
            names.append(element.name if not word else f"{element.name}.{word}")
    return names


def resolve_part(circuit: cm.Circuit, name: str, option: str = "--set") -> PartField:
    """The element field a part name means.

    Raises NetlistError naming the closest parameter or part names when there is no such part.
    """
    element_name, _, word = name.partition(".")
    element = circuit.by_name.get(element_name)
    fields = _fields_of(element) if element is not None else {}
    if word in fields:
        path, unit = fields[word]
        return PartField(name, element_name, path, unit)
    known = [*circuit.parameters, *part_names(circuit)]
    if element is not None and fields:
        own = [f"{element_name}.{w}" if w else element_name for w in fields]
        close = difflib.get_close_matches(name, own, n=1, cutoff=0.6)
        hint = did_you_mean(name, own) if close else f"{element_name} offers " + ", ".join(f"'{w}'" for w in own)
    else:
        hint = did_you_mean(name, known) or "this netlist has no parameters or parts of that kind"
    raise NetlistError(f"{option} names '{name}', which is neither a parameter nor a part of this circuit",
                       hint=hint)


def _replaced(element: Any, path: str, value: float) -> Any:
    if path == "control.angle":
        return dataclasses.replace(element, control=element.control.with_angle(value))
    if path == "control.changes.0":
        (_, closes), = element.control.changes
        return dataclasses.replace(element, control=dataclasses.replace(element.control, changes=((value, closes),)))
    if path.startswith("waveform."):
        attr = path.split(".", 1)[1]
        wave = dataclasses.replace(element.waveform, **{attr: value})
        return dataclasses.replace(element, waveform=wave)
    return dataclasses.replace(element, **{path: value})


def set_parts(circuit: cm.Circuit, settings: Mapping[str, Any], option: str = "--set") -> cm.Circuit:
    """A copy of ``circuit`` with element fields replaced.

    settings : part name → value (a quantity string such as ``"47 Ω"``, checked against
        the field's unit, or an SI float).  A field so set no longer follows the
        parameter it was written with (its recipe is dropped); an inline tolerance
        keeps its relative width around the new value.
    """
    by_name = {e.name: e for e in (*circuit.elements, *circuit.couplings)}
    recipes = dict(circuit.recipes)
    parameters = dict(circuit.parameters)
    spreads = dict(circuit.spreads)
    for name, given in settings.items():
        part = resolve_part(circuit, name, option)
        what = f"the value given for '{name}'"
        value = parse_quantity(given, part.unit or None, what) if isinstance(given, str) else float(given)
        if not math.isfinite(value):
            raise NetlistError(f"{what} is not a finite number", hint="give a finite number")
        by_name[part.element] = _replaced(by_name[part.element], part.field, value)
        recipe = recipes.pop((part.element, part.field), None)
        inline = {part.element, f"{part.element}.{part.field}"}  # the builder's names for inline tolerances
        owned = {name} | ({recipe.name} & inline if isinstance(recipe, ex.Name) else set())
        for own in owned:
            if own in spreads:
                spreads[own] = dataclasses.replace(spreads[own], nominal=value)
                parameters[own] = value
                recipes[(part.element, part.field)] = ex.Name(own)
    elements = tuple(by_name[e.name] for e in circuit.elements)
    couplings = tuple(by_name[c.name] for c in circuit.couplings)
    return dataclasses.replace(circuit, elements=elements, couplings=couplings, recipes=recipes,
                               parameters=parameters, spreads=spreads)


def _current_value(element: Any, path: str) -> float:
    if path == "control.changes.0":
        return float(element.control.changes[0][0])
    if path == "control.angle":
        return float(element.control.angle)
    target = element.waveform if path.startswith("waveform.") else element
    value = getattr(target, path.split(".")[-1])
    return float("nan") if value is None else float(value)


def expose_parts(circuit: cm.Circuit, names: Iterable[str], option: str = "--vary") -> cm.Circuit:
    """A copy of ``circuit`` in which each part name is also a parameter that feeds its field.

    Names that are already parameters are left alone; each part name gets
    ``parameters[name]`` = its current value and a recipe, replacing whatever the
    field was written with.  Unknown names are refused with the closest names.
    """
    recipes = dict(circuit.recipes)
    parameters = dict(circuit.parameters)
    changed = False
    for name in names:
        if name in circuit.parameters:
            continue
        part = resolve_part(circuit, name, option)
        value = _current_value(circuit.by_name[part.element], part.field)
        if not math.isfinite(value):
            state = "closed" if part.field == "on_resistance" else "open"
            raise NetlistError(
                f"{option} names '{name}', but {part.element} is ideal when {state} (it has no such resistance), "
                "so it cannot vary", hint=f"write '{part.field.split('_')[0]} 1 mΩ' (or a value) on {part.element}'s "
                f"line, or --set {name}=VALUE first")
        parameters[name] = value
        recipes[(part.element, part.field)] = ex.Name(name)
        changed = True
    if not changed:
        return circuit
    return dataclasses.replace(circuit, recipes=recipes, parameters=parameters)
