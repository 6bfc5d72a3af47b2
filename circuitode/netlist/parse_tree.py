"""The lark Transformer from parse tree to syntax tree: one method per grammar rule.

Each method of :class:`ToSyntaxTree` turns one rule's children into a syntax-tree
dataclass of :mod:`.syntax` or an expression node of :mod:`.expressions`,
carrying the file, line and column it came from.  Numbers are read with their
units here, and mistakes that only the tree shows (a field given twice, a
tolerance not in percent) are raised as located :class:`NetlistError`.
"""
from __future__ import annotations

from lark import Token, Transformer, v_args

from ..errors import NetlistError, Where
from . import expressions as ex
from ..quantities import read_quantity
from .syntax import (
    CouplingStmt, ElementStmt, Field, GroundStmt, IncludeStmt, ParamStmt, ProbeSpec, RecordStmt,
    AngleSpec, RequireStmt, SourceStmt, WindowSpec, SwitchStmt, DiodeStmt, ThresholdSpec, TimedSpec, TitleStmt, ToggleSpec,
    Tolerance,
    TransientStmt, Valued, WaveformSpec,
)

__all__ = ["ToSyntaxTree"]


class ToSyntaxTree(Transformer):
    """One method per grammar rule; each returns a syntax-tree dataclass or expression node."""

    def __init__(self, file: str, lines: list[str]):
        super().__init__(visit_tokens=False)
        self.file = file
        self.lines = lines

    def at(self, item) -> Where:
        line = getattr(item, "line", None) or 1
        column = getattr(item, "column", None) or 1
        text = self.lines[line - 1] if 0 < line <= len(self.lines) else ""
        return Where(self.file, line, column, text)

    # -- statements ------------------------------------------------------
    @v_args(meta=True)
    def start(self, meta, items):
        return tuple(items)

    @v_args(meta=True)
    def circuit_stmt(self, meta, items):
        return TitleStmt(str(items[0])[1:-1], self.at(meta))

    @v_args(meta=True)
    def include_stmt(self, meta, items):
        return IncludeStmt(str(items[0])[1:-1], self.at(items[0]))

    @v_args(meta=True)
    def param_stmt(self, meta, items):
        return ParamStmt(str(items[0]), items[1], self.at(items[0]))

    @v_args(meta=True)
    def ground_stmt(self, meta, items):
        return GroundStmt(str(items[0]), self.at(items[0]))

    @v_args(meta=True)
    def element_stmt(self, meta, items):
        kind, name, first, second, value, *rest = items
        return ElementStmt(str(kind), str(name), str(first), str(second), value, rest[0] if rest else None,
                           self.at(name))

    def initial_value(self, items):
        return items[0]

    @v_args(meta=True)
    def coupling_stmt(self, meta, items):
        name, first, second, k = items
        return CouplingStmt(str(name), str(first), str(second), k, (self.at(first), self.at(second)), self.at(name))

    @v_args(meta=True)
    def source_stmt(self, meta, items):
        kind, name, first, second, wave = items
        return SourceStmt(str(kind), str(name), str(first), str(second), wave, self.at(name))

    @v_args(meta=True)
    def constant_wave(self, meta, items):
        return WaveformSpec("constant", (Field("value", items[0], items[0].where),), (), self.at(meta))

    @v_args(meta=True)
    def points_wave(self, meta, items):
        return WaveformSpec("points", (), tuple(items), self.at(meta))

    def time_point(self, items):
        return (items[0], items[1])

    @v_args(meta=True)
    def named_wave(self, meta, items):
        kind, *fields = items
        return WaveformSpec(str(kind), tuple(fields), (), self.at(kind))

    def named_field(self, items):
        return Field(str(items[0]), items[1], self.at(items[0]))

    @v_args(meta=True)
    def switch_stmt(self, meta, items):
        name, first, second, control, *options = items
        on = next((v for k, v in options if k == "on"), None)
        off = next((v for k, v in options if k == "off"), None)
        for word in ("on", "off"):
            repeated = [v for k, v in options if k == word]
            if len(repeated) > 1:
                raise NetlistError(f"'{word}' is given twice for switch '{name}'", repeated[1].where,
                                   f"keep one '{word}' resistance")
        return SwitchStmt(str(name), str(first), str(second), control, on, off, self.at(name))

    @v_args(meta=True)
    def diode_stmt(self, meta, items):
        name, first, second, *options = items
        for word in ("drop", "on", "off"):
            repeated = [v for k, v in options if k == word]
            if len(repeated) > 1:
                raise NetlistError(f"'{word}' is given twice for diode '{name}'", repeated[1].where,
                                   f"keep one '{word}'")
        value = {k: v for k, v in options}
        return DiodeStmt(str(name), str(first), str(second), value.get("drop"), value.get("on"),
                         value.get("off"), self.at(name))

    def drop_option(self, items):
        return ("drop", items[0])

    def timed_control(self, items):
        return TimedSpec(tuple(items))

    def timed_move(self, items):
        return (str(items[0]) == "closes", items[1], self.at(items[0]))

    def angle_control(self, items):
        move, angle, source = items[0], items[1], items[2]
        earliest = items[3] if len(items) > 3 else None
        return AngleSpec(str(move) == "closes", angle, str(source), self.at(source), earliest, self.at(move))

    @v_args(meta=True)
    def toggle_control(self, meta, items):
        return ToggleSpec(tuple(items), self.at(meta))

    def threshold_control(self, items):
        move, probe, comparison, level = items
        return ThresholdSpec(str(move) == "closes", probe, str(comparison), level)

    def hysteresis_control(self, items):
        move, probe, comparison, level, move2, probe2, comparison2, level2 = items
        back = ThresholdSpec(str(move2) == "closes", probe2, str(comparison2), level2, where=self.at(move2))
        return ThresholdSpec(str(move) == "closes", probe, str(comparison), level, back, self.at(move))

    def on_option(self, items):
        return ("on", items[0])

    def off_option(self, items):
        return ("off", items[0])

    @v_args(meta=True)
    def transient_stmt(self, meta, items):
        return TransientStmt(tuple(items), self.at(meta))

    def _setting(word):  # noqa: N805 - a small factory used at class creation
        @v_args(meta=True)
        def method(self, meta, items):
            value = items[0]
            if isinstance(value, Token):
                value = str(value)
            return (word, value, self.at(meta))

        return method

    until_setting = _setting("until")
    step_setting = _setting("step")
    points_setting = _setting("points")
    method_setting = _setting("method")
    initial_setting = _setting("initial")
    del _setting

    @v_args(meta=True)
    def record_stmt(self, meta, items):
        return RecordStmt(tuple(items), self.at(meta))

    @v_args(meta=True)
    def require_stmt(self, meta, items):
        window = items.pop(2) if len(items) == 5 else None
        figure, probe, comparison, limit = items
        return RequireStmt(" ".join(str(figure).split()), probe, str(comparison), limit, self.at(meta), window)

    @v_args(meta=True)
    def require_energy(self, meta, items):
        window = items.pop(1) if len(items) == 4 else None
        element, comparison, limit = items
        probe = ProbeSpec("power", (str(element),), (self.at(element),), self.at(element))
        return RequireStmt("energy", probe, str(comparison), limit, self.at(meta), window)

    @v_args(meta=True)
    def window_between(self, meta, items):
        start, word, stop = items
        if str(word) != "to":
            raise NetlistError(f"expected 'to' between the two instants of the window, got '{word}'",
                               self.at(word), "write 'from 0 s to 10 ms'")
        return WindowSpec(start, stop, self.at(meta))

    @v_args(meta=True)
    def window_after(self, meta, items):
        return WindowSpec(items[0], None, self.at(meta))

    @v_args(meta=True)
    def window_before(self, meta, items):
        return WindowSpec(None, items[0], self.at(meta))

    # -- probes ----------------------------------------------------------
    def _probe(kind):  # noqa: N805
        @v_args(meta=True)
        def method(self, meta, items):
            return ProbeSpec(kind, tuple(str(t) for t in items), tuple(self.at(t) for t in items), self.at(meta))

        return method

    node_voltage = _probe("at")
    voltage_between = _probe("between")
    voltage_across = _probe("across")
    current_through = _probe("through")
    power_in = _probe("power")
    del _probe

    # -- values ----------------------------------------------------------
    @v_args(meta=True)
    def value(self, meta, items):
        return Valued(items[0], items[1] if len(items) > 1 else None, self.at(meta))

    @v_args(meta=True)
    def tolerance(self, meta, items):
        number = items[1]
        unit = next((str(t) for t in items[2:] if t.type == "UNIT"), "")
        distribution = next((str(t) for t in items[2:] if t.type == "DISTRIBUTION"), "normal")
        where = self.at(number)
        q = self._read(number, unit, where)
        if q.unit != "%":
            raise NetlistError("a tolerance is written in percent", where, f"write '± {number} %'")
        if not 0.0 < q.value < 1.0:
            raise NetlistError(f"a tolerance must lie between 0 % and 100 %; got {number} %", where,
                               "write a tolerance such as ± 5 %")
        return Tolerance(q.value, distribution, where)

    @v_args(meta=True)
    def quantity(self, meta, items):
        number = items[0]
        unit = str(items[1]) if len(items) > 1 else ""
        where = self.at(number)
        q = self._read(number, unit, where)
        return ex.Number(q.value, q.unit, where)

    @staticmethod
    def _read(number, unit: str, where):
        """The quantity of a number token and its unit, errors located at ``where``."""
        try:
            return read_quantity(str(number), unit)
        except NetlistError as err:
            raise NetlistError(err.message, where, err.hint) from None

    def name(self, items):
        return ex.Name(str(items[0]), self.at(items[0]))

    def call(self, items):
        return ex.Call(str(items[0]), items[1], self.at(items[0]))

    def _binary(op):  # noqa: N805
        @v_args(meta=True)
        def method(self, meta, items):
            return ex.Binary(op, items[0], items[1], self.at(meta))

        return method

    add = _binary("+")
    subtract = _binary("-")
    multiply = _binary("*")
    divide = _binary("/")
    raise_power = _binary("^")
    del _binary

    @v_args(meta=True)
    def negate(self, meta, items):
        return ex.Unary("-", items[0], self.at(meta))

    def keep_sign(self, items):
        return items[0]
