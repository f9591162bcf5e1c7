"""What one stage's check computes from that stage's own inputs alone, kept for the next check.

The interface re-checks the whole chain on every keystroke, and a keystroke changes one stage: the
other stages' gain errors, possible peak frequencies and block responses are the same as the
check before. Each is kept here under a key made of every input it is computed from, exactly
(the bytes of every array, the repr of every value: a -0.0 or the last bit of a resistance makes
another key), so a kept answer is always the answer the computation would give: the same
function on the same inputs. Nothing is kept that depends on anything outside its key.

Bounded: the least recently used entries go once there are more than MAX_ENTRIES or their
arrays hold more than MAX_BYTES (a long chain's responses on a fine grid are megabytes each).
Thread-safe: the interface's instant and full checks run in two threads.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Mapping
from dataclasses import fields, is_dataclass, replace
from typing import Any

import numpy as np

MAX_ENTRIES = 1024
MAX_BYTES = 96 * 2**20


class Kept:
    """A least-recently-used table of answers by exact key, with each answer's size in bytes."""

    def __init__(self, max_entries: int = MAX_ENTRIES, max_bytes: int = MAX_BYTES):
        self.max_entries, self.max_bytes = max_entries, max_bytes
        self._table: OrderedDict[Any, tuple[Any, int]] = OrderedDict()
        self._bytes = 0
        self._lock = threading.Lock()
        self.hits = self.misses = 0

    def get(self, key, build: Callable[[], Any], size: Callable[[Any], int] | None = None):
        with self._lock:
            found = self._table.get(key)
            if found is not None:
                self._table.move_to_end(key)
                self.hits += 1
                return found[0]
            self.misses += 1
        answer = build()  # outside the lock: the other thread may build meanwhile (same answer)
        nbytes = (size(answer) if size is not None else 0) + key_bytes(key)
        if nbytes > self.max_bytes:
            return answer
        with self._lock:
            if key not in self._table:
                self._table[key] = (answer, nbytes)
                self._bytes += nbytes
            while len(self._table) > self.max_entries or self._bytes > self.max_bytes:
                _, (_, dropped) = self._table.popitem(last=False)
                self._bytes -= dropped
        return answer

    def clear(self) -> None:
        with self._lock:
            self._table.clear()
            self._bytes = 0


def key_bytes(key) -> int:
    if isinstance(key, bytes):
        return len(key)
    if isinstance(key, tuple):
        return sum(key_bytes(k) for k in key)
    return 0


def array_key(x) -> tuple:
    """An array (or a number) by its exact contents: dtype, shape and bytes."""
    a = np.asarray(x)
    return (a.dtype.str, a.shape, a.tobytes())


def values_key(v: Mapping[str, Any]) -> tuple:
    return tuple((name, array_key(v[name])) for name in sorted(v))


def plan_key(plan) -> str:
    """Everything of a stage plan a stage-own computation reads: block, values, flags, part
    (as repr, which tells every float apart, -0.0 from 0.0 included)."""
    return repr((plan.block.name, sorted(plan.quantities.items()), sorted(plan.flags.items()), plan.part))


def answer_bytes(answer, seen: set | None = None) -> int:
    """The bytes of the arrays inside an answer (dataclasses, dicts, tuples, arrays)."""
    seen = set() if seen is None else seen
    if id(answer) in seen:
        return 0
    seen.add(id(answer))
    if isinstance(answer, np.ndarray):
        return answer.nbytes
    if isinstance(answer, dict):
        return sum(answer_bytes(x, seen) for x in answer.values())
    if isinstance(answer, (tuple, list)):
        return sum(answer_bytes(x, seen) for x in answer)
    if is_dataclass(answer) and not isinstance(answer, type):
        return sum(answer_bytes(getattr(answer, f.name), seen) for f in fields(answer))
    return 0


def frozen(answer, seen: set | None = None):
    """Every array inside the answer made read-only, in place: a kept answer is shared by later
    checks, so any code that wrote into one would raise rather than change another check."""
    seen = set() if seen is None else seen
    if id(answer) in seen:
        return answer
    seen.add(id(answer))
    if isinstance(answer, np.ndarray):
        answer.flags.writeable = False
    elif isinstance(answer, dict):
        for x in answer.values():
            frozen(x, seen)
    elif isinstance(answer, (tuple, list)):
        for x in answer:
            frozen(x, seen)
    elif is_dataclass(answer) and not isinstance(answer, type):
        for f in fields(answer):
            frozen(getattr(answer, f.name), seen)
    return answer


RESPONSES = Kept()
STAGE_FACTS = Kept()  # gain errors and peak frequencies: small


def clear() -> None:
    """Forget everything kept (a benchmark's cold check)."""
    RESPONSES.clear()
    STAGE_FACTS.clear()


def respond(
    block, part, v: Mapping[str, np.ndarray], s: np.ndarray, inverse_gain, differential: bool, handed: set
):
    """block.respond(v, s, inverse_gain, v["drive"], differential), kept by its exact inputs.
    The part is in the key though respond reads only inverse_gain of it: a walk keeps per-node
    terms by the node's identity, with the op amp's offset and bias in them. `handed`: ids of
    the responses one Prepared holds already; a kept response that one Prepared would hold
    twice (two stages with the same values, drive and part) is handed out as a copy of its
    nodes around the same arrays, so every stage's nodes are its own."""
    key = (
        "respond",
        block.name,
        repr(part),
        bool(differential),
        values_key(v),
        array_key(s),
        array_key(inverse_gain),
    )
    found = RESPONSES.get(
        key,
        lambda: frozen(block.respond(v, s, inverse_gain, v["drive"], differential)),
        answer_bytes,
    )
    if id(found) in handed:
        found = node_copy(found, {})
    handed.add(id(found))
    return found


def node_copy(answer, memo: dict):
    """The response with new Node, OpAmpNodes and BlockResponse objects around the same arrays,
    the sharing inside it kept (a stage's output node is its op amp's output node)."""
    from railroom.engine.circuit.blocks.base import BlockResponse, Node, OpAmpNodes

    if id(answer) in memo:
        return memo[id(answer)]
    if isinstance(answer, Node):
        copied: Any = replace(answer)
    elif isinstance(answer, OpAmpNodes):
        copied = replace(
            answer,
            output=node_copy(answer.output, memo),
            plus=node_copy(answer.plus, memo),
            current=node_copy(answer.current, memo),
        )
    elif isinstance(answer, BlockResponse):
        copied = replace(
            answer,
            output=node_copy(answer.output, memo),
            opamps=tuple(node_copy(a, memo) for a in answer.opamps),
            inner={k: node_copy(n, memo) for k, n in answer.inner.items()},
            input_node=node_copy(answer.input_node, memo)
            if isinstance(answer.input_node, Node)
            else answer.input_node,
        )
    else:
        return answer
    memo[id(answer)] = copied
    return copied
