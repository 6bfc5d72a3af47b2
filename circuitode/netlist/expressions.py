"""A small expression tree for parameter values, with its own evaluator (never ``eval``).

Nodes: :class:`Number`, :class:`Name`, :class:`Unary`, :class:`Binary`,
:class:`Call`.  Operators ``+ - * / ^`` and the functions ``sqrt exp log``
(natural logarithm) ``log10 abs``; the constant ``pi``.  Every node satisfies
the ``Recipe`` protocol of :mod:`circuitode.model.run_settings`: ``.names`` is the
frozenset of parameter names it reads and ``.evaluate(env)`` computes it from a
mapping of names to floats or numpy arrays (shapes broadcast), so the same tree
serves one nominal build and a batch of a million tolerance samples.
"""
from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping

import numpy as np

from ..errors import NetlistError, Where

__all__ = [
    "Expression",
    "Number",
    "Name",
    "Unary",
    "Binary",
    "Call",
    "FUNCTIONS",
    "CONSTANTS",
    "substitute",
    "evaluation_order",
    "did_you_mean",
]

#: Functions an expression may call, by name (numpy ufuncs: floats and arrays alike).
FUNCTIONS: dict[str, Callable[[Any], Any]] = {
    "sqrt": np.sqrt,
    "exp": np.exp,
    "log": np.log,
    "log10": np.log10,
    "abs": np.abs,
}

#: Named constants.
CONSTANTS: dict[str, float] = {"pi": float(np.pi)}

_BINARY: dict[str, Callable[[Any, Any], Any]] = {
    "+": np.add,
    "-": np.subtract,
    "*": np.multiply,
    "/": np.true_divide,
    "^": np.power,
}


def did_you_mean(word: str, choices, n: int = 3) -> str:
    """A hint naming the closest choices, or listing a few when none is close."""
    choices = sorted(set(choices))
    close = difflib.get_close_matches(word, choices, n=n, cutoff=0.6)
    if close:
        return "did you mean " + " or ".join(f"'{c}'" for c in close) + "?"
    if not choices:
        return ""
    shown = ", ".join(choices[:12]) + (" …" if len(choices) > 12 else "")
    return f"known names are: {shown}"


@dataclass(frozen=True)
class Number:
    """A literal. value : SI float.  unit : canonical unit as written, or None."""

    value: float
    unit: str | None = None
    where: Where | None = field(default=None, compare=False, repr=False)

    @property
    def names(self) -> frozenset[str]:
        return frozenset()

    def evaluate(self, env: Mapping[str, Any]) -> Any:
        return self.value

    def __str__(self) -> str:
        return repr(self.value)


@dataclass(frozen=True)
class Name:
    """A reference to a parameter, or the constant ``pi``."""

    name: str
    where: Where | None = field(default=None, compare=False, repr=False)

    @property
    def names(self) -> frozenset[str]:
        return frozenset() if self.name in CONSTANTS else frozenset({self.name})

    def evaluate(self, env: Mapping[str, Any]) -> Any:
        if self.name in env:
            return env[self.name]
        if self.name in CONSTANTS:
            return CONSTANTS[self.name]
        raise NetlistError(
            f"unknown name '{self.name}'",
            self.where,
            did_you_mean(self.name, [*env, *CONSTANTS]),
        )

    def __str__(self) -> str:
        return self.name


@dataclass(frozen=True)
class Unary:
    """``-operand`` or ``+operand``."""

    op: str
    operand: "Expression"
    where: Where | None = field(default=None, compare=False, repr=False)

    @property
    def names(self) -> frozenset[str]:
        return self.operand.names

    def evaluate(self, env: Mapping[str, Any]) -> Any:
        value = self.operand.evaluate(env)
        return np.negative(value) if self.op == "-" else value

    def __str__(self) -> str:
        return f"({self.op}{self.operand})"


@dataclass(frozen=True)
class Binary:
    """``left op right`` with op one of ``+ - * / ^``."""

    op: str
    left: "Expression"
    right: "Expression"
    where: Where | None = field(default=None, compare=False, repr=False)

    @property
    def names(self) -> frozenset[str]:
        return self.left.names | self.right.names

    def evaluate(self, env: Mapping[str, Any]) -> Any:
        with np.errstate(all="ignore"):
            return _BINARY[self.op](self.left.evaluate(env), self.right.evaluate(env))

    def __str__(self) -> str:
        return f"({self.left} {self.op} {self.right})"


@dataclass(frozen=True)
class Call:
    """``function(argument)`` for a function in :data:`FUNCTIONS`."""

    function: str
    argument: "Expression"
    where: Where | None = field(default=None, compare=False, repr=False)

    def __post_init__(self) -> None:
        if self.function not in FUNCTIONS:
            raise NetlistError(
                f"unknown function '{self.function}'",
                self.where,
                did_you_mean(self.function, FUNCTIONS),
            )

    @property
    def names(self) -> frozenset[str]:
        return self.argument.names

    def evaluate(self, env: Mapping[str, Any]) -> Any:
        with np.errstate(all="ignore"):
            return FUNCTIONS[self.function](self.argument.evaluate(env))

    def __str__(self) -> str:
        return f"{self.function}({self.argument})"


Expression = Number | Name | Unary | Binary | Call


def substitute(expr: Expression, replace: Callable[[Name], "Expression | None"]) -> Expression:
    """Rebuild ``expr`` with each Name for which ``replace`` returns a tree swapped for that tree."""
    if isinstance(expr, Name):
        new = replace(expr)
        return expr if new is None else new
    if isinstance(expr, Unary):
        return Unary(expr.op, substitute(expr.operand, replace), expr.where)
    if isinstance(expr, Binary):
        return Binary(expr.op, substitute(expr.left, replace), substitute(expr.right, replace), expr.where)
    if isinstance(expr, Call):
        return Call(expr.function, substitute(expr.argument, replace), expr.where)
    return expr


def _first_use(expr: Expression, name: str) -> Where | None:
    """Where ``name`` is first referenced inside ``expr``."""
    if isinstance(expr, Name):
        return expr.where if expr.name == name else None
    for child in (getattr(expr, "operand", None), getattr(expr, "left", None), getattr(expr, "right", None),
                  getattr(expr, "argument", None)):
        if child is not None:
            found = _first_use(child, name)
            if found is not None:
                return found
    return None


def evaluation_order(definitions: Mapping[str, Expression]) -> list[str]:
    """Parameter names in an order where each comes after everything it reads.

    Parameters
    ----------
    definitions : parameter name → its expression.  Names read but not defined
        (and not constants) raise NetlistError with a did-you-mean hint.

    Raises
    ------
    NetlistError : naming the cycle, e.g. ``a → b → a``, located at the first use.
    """
    for name, expr in definitions.items():
        for used in sorted(expr.names):
            if used not in definitions:
                raise NetlistError(
                    f"unknown name '{used}' in the value of '{name}'",
                    _first_use(expr, used),
                    did_you_mean(used, [*definitions, *CONSTANTS]),
                )
    order: list[str] = []
    state: dict[str, int] = {}  # 1 visiting, 2 done
    for root in definitions:
        if state.get(root) == 2:
            continue
        stack: list[tuple[str, list[str]]] = [(root, sorted(definitions[root].names))]
        state[root] = 1
        path = [root]
        while stack:
            name, pending = stack[-1]
            if pending:
                nxt = pending.pop(0)
                if state.get(nxt) == 1:
                    cycle = path[path.index(nxt):] + [nxt]
                    raise NetlistError(
                        "parameters depend on each other in a circle: " + " → ".join(cycle),
                        _first_use(definitions[name], nxt),
                        "give one of them a value that does not depend on the others",
                    )
                if state.get(nxt) != 2:
                    state[nxt] = 1
                    path.append(nxt)
                    stack.append((nxt, sorted(definitions[nxt].names)))
            else:
                stack.pop()
                path.pop()
                state[name] = 2
                order.append(name)
    return order
