"""Independent modified nodal analysis (MNA) for checking railroom's closed-form block formulas.

Lives only in the tests and imports nothing from railroom: it is the outside check.
Method: Ho, Ruehli and Brennan, "The modified nodal approach to network analysis", IEEE Trans.
Circuits and Systems, 1975 -- node voltages plus one current unknown per voltage-defined branch,
solved with numpy.linalg.solve, vectorised over frequency and over a leading batch of draws.

Sign conventions:
- every source and op-amp current unknown is the current the element delivers INTO its node;
- `current(node, amps)` injects `amps` into `node` from 0 V (an op amp's input bias current,
  flowing from the circuit into the pin, is therefore `current(pin, -ib)`);
- an op amp obeys V_out = A(s) (V+ + offset - V-), with A(s) = A0 / (1 + s A0 / (2 pi gbw));
  the row is written as V_out / A(s) - V+ + V- = offset so that the ideal op amp (nullor) is
  simply 1/A = 0.
AC phasor and DC analyses are separate solves (superposition): the caller picks the values.
f = 0 is DC, where a capacitor is open.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

GROUND = "0"

Value = float | complex | np.ndarray


@dataclass(frozen=True, eq=False)
class Solution:
    """Solved unknowns; each array has shape batch + (len(freqs),)."""

    voltages: dict[str, np.ndarray]
    source_currents: dict[str, np.ndarray] = field(default_factory=dict)
    opamp_currents: dict[str, np.ndarray] = field(default_factory=dict)

    def __getitem__(self, node: str) -> np.ndarray:
        return self.voltages[node]

    def __contains__(self, node: str) -> bool:
        return node in self.voltages

    def keys(self):
        return self.voltages.keys()


@dataclass(frozen=True, eq=False)
class _OpAmp:
    plus: str
    minus: str
    out: str
    open_loop_gain: object
    gbw: object
    offset: object


class Circuit:
    """A tiny linear circuit: two-terminal passives, grounded sources and op amps."""

    def __init__(self) -> None:
        self._nodes: list[str] = []
        self._admittances: list[tuple[str, str, object, bool]] = []  # (a, b, value, is_capacitor)
        self._sources: dict[str, object] = {}
        self._currents: list[tuple[str, object]] = []
        self._opamps: dict[str, _OpAmp] = {}

    def _touch(self, *nodes: str) -> None:
        for node in nodes:
            if node != GROUND and node not in self._nodes:
                self._nodes.append(node)

    def resistor(self, a: str, b: str, ohms: Value) -> None:
        self._touch(a, b)
        self._admittances.append((a, b, ohms, False))

    def capacitor(self, a: str, b: str, farads: Value) -> None:
        self._touch(a, b)
        self._admittances.append((a, b, farads, True))

    def source(self, node: str, volts: Value) -> None:
        """Ideal voltage source from `node` to 0 V."""
        if node in self._sources:
            raise ValueError(f"node {node!r} already has a source")
        self._touch(node)
        self._sources[node] = volts

    def current(self, node: str, amps: Value) -> None:
        """Ideal current source pushing `amps` from 0 V into `node`."""
        self._touch(node)
        self._currents.append((node, amps))

    def opamp(
        self,
        plus: str,
        minus: str,
        out: str,
        open_loop_gain: Value | None = None,
        gbw: Value | None = None,
        offset: Value = 0.0,
    ) -> None:
        """Op amp as a VCVS; open_loop_gain=None and gbw=None is the ideal op amp (nullor)."""
        if out in self._opamps:
            raise ValueError(f"node {out!r} already driven by an op amp")
        self._touch(plus, minus, out)
        self._opamps[out] = _OpAmp(plus, minus, out, open_loop_gain, gbw, offset)

    def _batch_shape(self) -> tuple[int, ...]:
        values = [v for *_, v, _ in self._admittances] + list(self._sources.values())
        values += [amps for _, amps in self._currents]
        for op in self._opamps.values():
            values += [v for v in (op.open_loop_gain, op.gbw, op.offset) if v is not None]
        return np.broadcast_shapes(*(np.shape(v) for v in values))

    def analyse(self, freqs: Value) -> Solution:
        freqs = np.atleast_1d(np.asarray(freqs, dtype=float))
        s = 2j * np.pi * freqs
        row = {node: k for k, node in enumerate(self._nodes)}
        source_rows = {node: len(row) + k for k, node in enumerate(self._sources)}
        opamp_rows = {out: len(row) + len(source_rows) + k for k, out in enumerate(self._opamps)}
        size = len(row) + len(source_rows) + len(opamp_rows)
        shape = self._batch_shape() + freqs.shape
        matrix = np.zeros(shape + (size, size), dtype=complex)
        rhs = np.zeros(shape + (size,), dtype=complex)

        def per_freq(value: object) -> np.ndarray:
            # a (N,) batch of draws lines up with the leading axis; frequency is the last one
            return np.broadcast_to(np.asarray(value)[..., np.newaxis], shape)

        for a, b, value, is_capacitor in self._admittances:
            y = s * per_freq(value) if is_capacitor else 1.0 / per_freq(value)
            i, j = row.get(a), row.get(b)
            if i is not None:
                matrix[..., i, i] += y
            if j is not None:
                matrix[..., j, j] += y
            if i is not None and j is not None:
                matrix[..., i, j] -= y
                matrix[..., j, i] -= y
        for node, amps in self._currents:
            rhs[..., row[node]] += per_freq(amps)
        for node, k in source_rows.items():
            matrix[..., row[node], k] = -1.0
            matrix[..., k, row[node]] = 1.0
            rhs[..., k] = per_freq(self._sources[node])
        for out, k in opamp_rows.items():
            self._stamp_opamp(matrix, rhs, self._opamps[out], row, k, s, per_freq)

        x = np.linalg.solve(matrix, rhs[..., np.newaxis])[..., 0]
        voltages = {node: x[..., k] for node, k in row.items()}
        voltages[GROUND] = np.zeros(shape, dtype=complex)
        return Solution(
            voltages,
            {node: x[..., k] for node, k in source_rows.items()},
            {out: x[..., k] for out, k in opamp_rows.items()},
        )

    @staticmethod
    def _stamp_opamp(matrix, rhs, op: _OpAmp, row, k, s, per_freq) -> None:
        # 1/A(s) = 1/A0 + s / (2 pi gbw): the single-pole model of the docstring
        inverse_gain = np.zeros(rhs.shape[:-1], dtype=complex)
        if op.open_loop_gain is not None:
            inverse_gain += 1.0 / per_freq(op.open_loop_gain)
        if op.gbw is not None:
            inverse_gain += s / (2 * np.pi * per_freq(op.gbw))
        matrix[..., row[op.out], k] -= 1.0
        matrix[..., k, row[op.out]] += inverse_gain
        if op.plus != GROUND:
            matrix[..., k, row[op.plus]] -= 1.0
        if op.minus != GROUND:
            matrix[..., k, row[op.minus]] += 1.0
        rhs[..., k] = per_freq(op.offset)

    def solve(self, freqs: Value) -> dict[str, np.ndarray]:
        """Node voltages; each array has shape batch + (len(freqs),)."""
        return self.analyse(freqs).voltages

    def source_current(self, node: str, freqs: Value) -> np.ndarray:
        """Current the source at `node` delivers into the circuit."""
        return self.analyse(freqs).source_currents[node]

    def opamp_output_current(self, out: str, freqs: Value) -> np.ndarray:
        """Current the op amp delivers into its output node `out`."""
        return self.analyse(freqs).opamp_currents[out]
