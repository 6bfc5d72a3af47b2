"""SI quantities: the only place where prefixes and units are read or printed.

Everything inside circuitode is a plain SI float (Ω, F, H, V, A, s, Hz, rad,
J, W, A²s).  This module turns written quantities such as ``"4.7 kΩ"``,
``"100 µF"``, ``"4k7"`` or ``"90 deg"`` into those floats, and prints floats
back in engineering notation (``format_si(0.0047, "F") == "4.7 mF"``).

Prefixes are case-sensitive: ``p n u µ m k M G`` (``m`` milli, ``M`` mega).
IEC 60062 letter-and-digit codes put the prefix letter where the decimal
point goes: ``4k7`` = 4.7 k, ``2m2`` = 2.2 m, ``4n7`` = 4.7 n, and ``4R7`` =
4.7 (``R`` marks the decimal point of a value in ohms).
"""
from __future__ import annotations

import math
import re
from decimal import Decimal
from dataclasses import dataclass
from typing import Iterable

import numpy as np

from .errors import NetlistError

__all__ = [
    "PREFIXES",
    "PREFIX_EXPONENTS",
    "UNITS",
    "UNIT_WORDS",
    "Quantity",
    "split_unit",
    "read_number",
    "read_quantity",
    "parse_quantity",
    "check_unit",
    "unit_phrase",
    "format_si",
    "si_scale",
]

#: Power of ten of every accepted prefix (BIPM SI Brochure, 9th ed., table 7).
PREFIX_EXPONENTS: dict[str, int] = {
    "p": -12,
    "n": -9,
    "u": -6,
    "\u00b5": -6,  # U+00B5 micro sign
    "\u03bc": -6,  # U+03BC Greek small letter mu
    "m": -3,
    "k": 3,
    "M": 6,
    "G": 9,
}

#: Multiplier of every accepted prefix.
PREFIXES: dict[str, float] = {p: 10.0**e for p, e in PREFIX_EXPONENTS.items()}

#: Prefixes used when printing, by power of ten.
_PRINT_PREFIXES = {-12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}


@dataclass(frozen=True)
class _Unit:
    canonical: str  # the unit inside circuitode (after conversion)
    exponent: int  # written value × 10**exponent × factor = SI value in `canonical`
    prefixable: bool
    factor: float = 1.0

    @property
    def scale(self) -> float:
        return 10.0**self.exponent * self.factor


#: Every written unit → its canonical unit and conversion factor.
UNITS: dict[str, _Unit] = {
    "Ω": _Unit("Ω", 0, True),  # U+03A9 Greek capital omega
    "\u2126": _Unit("Ω", 0, True),  # U+2126 ohm sign
    "ohm": _Unit("Ω", 0, True),
    "ohms": _Unit("Ω", 0, True),
    "F": _Unit("F", 0, True),
    "H": _Unit("H", 0, True),
    "V": _Unit("V", 0, True),
    "A": _Unit("A", 0, True),
    "s": _Unit("s", 0, True),
    "Hz": _Unit("Hz", 0, True),
    "J": _Unit("J", 0, True),
    "W": _Unit("W", 0, True),
    "A²s": _Unit("A²s", 0, True),
    "A2s": _Unit("A²s", 0, True),
    "V/s": _Unit("V/s", 0, True),
    "A/s": _Unit("A/s", 0, True),
    "%": _Unit("%", -2, False),
    "deg": _Unit("rad", 0, False, math.pi / 180.0),
    "°": _Unit("rad", 0, False, math.pi / 180.0),
    "rad": _Unit("rad", 0, False),
}

#: Plain-word names of canonical units, used in messages.
UNIT_WORDS: dict[str, str] = {
    "Ω": "ohms (Ω)",
    "F": "farads (F)",
    "H": "henries (H)",
    "V": "volts (V)",
    "A": "amperes (A)",
    "s": "seconds (s)",
    "Hz": "hertz (Hz)",
    "J": "joules (J)",
    "W": "watts (W)",
    "A²s": "ampere-squared seconds (A²s)",
    "V/s": "volts per second (V/s)",
    "A/s": "amperes per second (A/s)",
    "%": "percent (%)",
    "rad": "degrees (deg) or radians (rad)",
    "": "a plain number",
}

_DECIMAL = re.compile(r"(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_LETTER_CODE = re.compile(r"(\d+)([pnuµμmkMGR])(\d+)")
_QUANTITY = re.compile(r"\s*([+-]?)\s*(\d+[pnuµμmkMGR]\d+|(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(\S*)\s*")


@dataclass(frozen=True)
class Quantity:
    """A number read from text. value : SI float.  unit : canonical unit, or None when unwritten."""

    value: float
    unit: str | None


def _unit_list() -> str:
    return "Ω (or ohm), F, H, V, A, s, Hz, J, W, A²s (or A2s), V/s, A/s, %, deg, rad"


def _split(text: str) -> tuple[int, float, str | None]:
    """(power of ten, extra factor, canonical unit) of a written unit; see split_unit."""
    if text == "":
        return 0, 1.0, None
    if text in UNITS:
        u = UNITS[text]
        return u.exponent, u.factor, u.canonical
    if "/" in text:
        top, _, bottom = text.partition("/")
        top_exp, _, top_unit = _split(top)
        bottom_exp, _, bottom_unit = _split(bottom)
        if top_unit in ("V", "A") and bottom_unit == "s":
            return top_exp - bottom_exp, 1.0, f"{top_unit}/s"
        raise NetlistError(
            f"unknown unit '{text}'",
            hint=f"a rate is written V/s or A/s (with prefixes: kV/ms); units are {_unit_list()}",
        )
    if text in PREFIX_EXPONENTS:
        return PREFIX_EXPONENTS[text], 1.0, None
    head, rest = text[0], text[1:]
    if head in PREFIX_EXPONENTS and rest in UNITS:
        u = UNITS[rest]
        if not u.prefixable:
            raise NetlistError(f"the unit '{rest}' takes no prefix; got '{text}'", hint=f"write the value in plain {rest}")
        return PREFIX_EXPONENTS[head] + u.exponent, u.factor, u.canonical
    if text.lower() == "meg":
        hint = "mega is written with a capital M, as in 10 MΩ"
    elif (head.swapcase() in PREFIX_EXPONENTS and (rest in UNITS or rest == "")) or text.swapcase() in UNITS:
        hint = "prefixes and units are case-sensitive: m is milli, M is mega, k is kilo; units are " + _unit_list()
    else:
        hint = f"prefixes are p n u µ m k M G; units are {_unit_list()}"
    raise NetlistError(f"unknown unit '{text}'", hint=hint)


def split_unit(text: str) -> tuple[float, str | None]:
    """Read a written unit with its optional prefix.

    Parameters
    ----------
    text : e.g. ``"kΩ"``, ``"ms"``, ``"µF"``, ``"k"`` (a bare prefix), ``"%"``, ``"kV/ms"``.

    Returns
    -------
    (scale, canonical) : multiply the written number by ``scale`` to get SI;
    ``canonical`` is the unit inside circuitode, or None for a bare prefix.

    Raises
    ------
    NetlistError : for an unknown unit or a prefix where none is allowed.
    """
    exponent, factor, canonical = _split(text)
    return 10.0**exponent * factor, canonical


def _digits(text: str) -> tuple[Decimal, bool]:
    """Exact value of written digits (decimal or IEC 60062 code) and whether ``R`` marked ohms."""
    code = _LETTER_CODE.fullmatch(text)
    if code:
        whole, letter, fraction = code.groups()
        base = Decimal(f"{whole}.{fraction}")
        return (base if letter == "R" else base.scaleb(PREFIX_EXPONENTS[letter])), letter == "R"
    if not _DECIMAL.fullmatch(text):
        raise NetlistError(f"'{text}' is not a number", hint="write digits such as 4.7, 1e-3 or 4k7")
    mantissa, _, exponent = text.lower().partition("e")
    if len(mantissa) > _MAX_DIGITS or (exponent and abs(int(exponent[:_MAX_DIGITS])) > _MAX_EXPONENT):
        raise NetlistError(f"'{_shorten(text)}' is out of range",
                           hint=f"write at most {_MAX_DIGITS} digits and an exponent between "
                                f"-{_MAX_EXPONENT} and {_MAX_EXPONENT}; use a prefix such as k, M, m or u")
    return Decimal(text), False


#: a number is written with at most this many digits, and an exponent of at most this size
_MAX_DIGITS = 60
_MAX_EXPONENT = 400


def _shorten(text: str, width: int = 40) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


def _to_float(value: Decimal, text: str) -> float:
    try:
        result = float(value)
    except ArithmeticError:
        result = math.inf
    if not math.isfinite(result) or (result == 0.0 and value != 0):
        raise NetlistError(f"'{text}' is out of range", hint="use a prefix such as k, M, G or m, u, n, p")
    return result


def read_number(text: str) -> tuple[float, bool]:
    """Read the digits of a quantity: a decimal (``4.7``, ``1e-3``) or an IEC 60062 code (``4k7``).

    Returns
    -------
    (value, marks_ohms) : the value with the code letter's prefix applied, and
    whether the code used ``R`` (which marks a value in ohms).
    """
    value, marks_ohms = _digits(text)
    return _to_float(value, text), marks_ohms


def read_quantity(number: str, unit: str = "") -> Quantity:
    """Combine separately lexed digits and unit into a :class:`Quantity` (SI value).

    The decimal scaling is exact: ``read_quantity("100", "µF").value == 1e-4``.
    """
    value, marks_ohms = _digits(number)
    exponent, factor, canonical = _split(unit)
    if marks_ohms:
        if canonical not in (None, "Ω") or exponent != 0:
            raise NetlistError(
                f"the letter R in '{number}' marks a value in ohms; it cannot carry the unit '{unit}'",
                hint=f"write {number.replace('R', '.')} {unit}",
            )
        canonical = "Ω"
    elif _LETTER_CODE.fullmatch(number) and unit and unit not in UNITS and "/" not in unit:
        raise NetlistError(
            f"the code '{number}' already holds its prefix; it cannot take another in '{unit}'",
            hint=f"write {number} followed by the unit alone",
        )
    si = _to_float(value.scaleb(exponent), f"{number} {unit}".strip()) * factor
    return Quantity(si, canonical)


def unit_phrase(unit: str | None) -> str:
    """Plain words for a canonical unit, e.g. ``"farads (F)"``."""
    return UNIT_WORDS.get(unit or "", f"'{unit}'")


def check_unit(found: str | None, expected: str | None, what: str) -> None:
    """Raise a NetlistError when a written unit is not the expected one.

    ``found`` None (no unit written) always passes, and so does ``expected`` None
    (any unit); ``expected`` ``""`` demands a plain number.  ``what`` names the value,
    e.g. ``"a capacitor's value"``; the message reads
    "a capacitor's value is in farads (F); got H".
    """
    if found is None or expected is None or found == expected:
        return
    shown = "deg/rad" if found == "rad" else found
    raise NetlistError(
        f"{what} is in {unit_phrase(expected)}; got {shown}",
        hint=f"write the value in {unit_phrase(expected)}" if expected else "write a plain number",
    )


def parse_quantity(text: str, expected_unit: str | None = None, what: str = "the value") -> float:
    """Read a whole quantity such as ``"47 Ω"``, ``"4k7"``, ``"-2 mA"`` or ``"90 deg"``.

    Parameters
    ----------
    text : the written quantity (number, optional prefix and unit).
    expected_unit : canonical unit the value must have (``"Ω"``, ``"F"`` …, ``"rad"``
        for angles, ``"%"`` for percentages); None accepts any unit.
    what : how messages name the value.

    Returns
    -------
    float : SI value (percent as a fraction, degrees as radians).

    Examples
    --------
    >>> parse_quantity("4.7 kΩ", "Ω")
    4700.0
    >>> parse_quantity("4n7", "F")
    4.7e-09
    """
    m = _QUANTITY.fullmatch(text)
    if not m:
        raise NetlistError(f"'{text}' is not a quantity", hint="write a number with an optional unit, e.g. 47 Ω, 4k7 or 100 µF")
    sign, number, unit = m.groups()
    q = read_quantity(number, unit)
    if expected_unit == "rad" and not q.unit:  # as in a netlist: a bare 30 would be 30 rad = 1719 deg
        raise NetlistError(f"{what} is an angle and needs its unit",
                           hint="write it in degrees (deg) or radians (rad), e.g. 90deg")
    check_unit(q.unit, expected_unit, what)
    return -q.value if sign == "-" else q.value


# --------------------------------------------------------------------------
# Printing
# --------------------------------------------------------------------------


def _exponent3(magnitude: float) -> int:
    """Power of ten, a multiple of 3 within the printable prefixes, for a positive magnitude."""
    e = int(math.floor(math.log10(magnitude) / 3.0)) * 3
    return min(max(e, -12), 9)


def format_si(value: float, unit: str, digits: int = 4) -> str:
    """Print an SI value in engineering notation with a prefix.

    Parameters
    ----------
    value : SI value (a percentage is given in percent, e.g. 12.5 for 12.5 %).
    unit : the unit to print, e.g. ``"Ω"``, ``"F"``, ``"A²s"``, ``"%"``; ``""`` for none.
    digits : significant digits.

    Examples
    --------
    >>> format_si(0.0047, "F")
    '4.7 mF'
    >>> format_si(1500, "Ω")
    '1.5 kΩ'
    """
    value = float(value)
    suffix = f" {unit}" if unit else ""
    if unit in ("%", "deg", "rad", "") or not math.isfinite(value) or value == 0.0:
        if value == 0.0:
            return f"0{suffix}"
        return f"{value:.{digits}g}{suffix}"
    e = _exponent3(abs(value))
    mantissa = float(f"{value / 10.0**e:.{digits}g}")
    if abs(mantissa) >= 1000.0 and e < 9:  # rounding carried into the next prefix
        e += 3
        mantissa = float(f"{value / 10.0**e:.{digits}g}")
    text = f"{mantissa:.{digits}g}"
    return f"{text} {_PRINT_PREFIXES[e]}{unit}"


def format_value(value: float, unit: str, digits: int = 4) -> str:
    """As :func:`format_si`, but an angle (SI radians) is printed in degrees, as users write it.

    >>> format_value(math.pi / 2, "rad")
    '90 deg'
    """
    if unit == "rad":
        return format_si(math.degrees(float(value)), "deg", digits)
    return format_si(value, unit, digits)


def si_scale(values: Iterable[float] | np.ndarray) -> tuple[float, str]:
    """A factor and prefix for a plot axis, so that ``values * factor`` reads in ``prefix + unit``.

    Parameters
    ----------
    values : array-like of SI values, any shape.

    Returns
    -------
    (factor, prefix) : e.g. ``(1e3, "m")`` for times up to 60 ms; ``(1.0, "")``
    when the values are all zero, empty or not finite.
    """
    arr = np.abs(np.asarray(values, dtype=float)).ravel()
    arr = arr[np.isfinite(arr)]
    if arr.size == 0 or not np.any(arr > 0):
        return 1.0, ""
    e = _exponent3(float(arr.max()))
    return 10.0 ** (-e), _PRINT_PREFIXES[e]
