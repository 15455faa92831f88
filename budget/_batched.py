"""A compiled program run as array operations over rows (Monte Carlo of wide models).

Method: every operation of ``Program`` gets a level (one more than its deepest operand).
Operations of one level with the same kind, payload and number of operands, whose
operands at each position come from one source (the same value, numbers, or rows of one
two-dimensional array: a run of drawn inputs or an earlier group's result), run as one
numpy call on a (k × width) array instead of k calls. Only exactly rounded operations are
grouped (+, ×, 1/x, x², √x) and every element sees the same operations in the same order
as in ``Program.evaluate``, so the values are the same to the last bit. A sum or product
whose operands begin with consecutive rows of a group is one reduction along the rows
(numpy reduces an outer axis row after row, in order, when a row has at least two values;
a single column falls back to the operation by operation fold).

Where such a sum or product takes every row of a tree of groups that nothing else reads
(``_fusions``: the mean of 3332 determinations, U_i·t_i·(1/(c·M·R·m_i)) summed), and the
compiled draws are loaded (a long run), the tree's rows are made and reduced by one
compiled loop (``_compiled_rows``) from the draws, with the same operations in the same
order, and its groups' arrays are not made at all; a slice is then the whole part.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from ._program import Program, _apply, _reduced
from ._ziggurat import compiled_rows

__all__ = ["Schedule"]

_GROUPED = {"add", "mul", "pow"}
_POWERS = (-1.0, 2.0, 0.5)  # the exponents ``_apply`` computes exactly (1/x, x·x, √x)
_SMALLEST = 4  # fewer operations alike run one by one

# the instructions of a row's program for the compiled loop (_compiled_rows): operations
# register = source; register + source; register × source; 1/source; source × source;
# √source; and the kinds of source: a register, a row of values shared by every row, a
# constant per row, a row of the first or the second run of draws
SET, ADD, MUL, RECIPROCAL, SQUARE, ROOT = range(6)
REGISTER, VECTOR, CONSTANT, FIRST, SECOND = range(5)

# where an operand comes from: ("one", slot), ("const", column), ("rows", source, index);
# a source is ("input", run) (a drawn run's buffer) or ("group", number)
Source = tuple[Any, ...]


class Schedule:
    """The steps of ``program`` by level, operations alike grouped into array operations.

    ``layout`` maps an input slot to (run, row) when that input's values are row ``row``
    of the two-dimensional array of draws ``run`` passed to ``run``."""

    def __init__(self, program: Program, layout: dict[int, tuple[int, int]]) -> None:
        self.program = program
        self.inputs = len(program.symbols)
        self.where: dict[int, Source] = {s: (("input", r), row) for s, (r, row)
                                         in layout.items()}
        self.items: list[tuple[Any, ...]] = []
        self.widest = 1  # rows of the largest group
        groups = 0
        order = _readers(program)
        for level in _levels(program):
            for kind, members in _alike(program, level, self.where, order):
                if kind != "group":
                    self.items.extend(("step", *m) for m in members)
                    continue
                at, op, args, payload, _ = members[0]
                operands = [self._operand([m[2][j] for m in members])
                            for j in range(1 if op == "pow" else len(args))]
                self.items.append(("group", groups, op, payload, operands, len(members)))
                for row, member in enumerate(members):
                    self.where[member[0]] = (("group", groups), row)
                self.widest = max(self.widest, len(members))
                groups += 1
        self.items = [self._spans(item) for item in self.items]
        # the inputs read one by one (the others are read as rows of their run)
        self.direct = sorted({slot for item in self.items for slot in _reads(item)
                              if slot < self.inputs} | {s for s in program.outputs
                                                        if s < self.inputs})
        self.release = _releases(self.items, program.outputs, self.where)
        # sums and products over every row of a tree of groups, for the compiled loop
        self.fusions = _fusions(self.items, self.where, program.outputs, program._ranges)
        self.fused = frozenset(g for f in self.fusions.values() for g in f.groups)
        # no group is made when the compiled loop runs: nothing bounds a slice's width
        self.unbounded = bool(self.fused) and len(self.fused) == groups

    def _operand(self, slots: list[int]) -> Source:
        if all(s == slots[0] for s in slots):
            return ("one", slots[0])
        if all(s in self.program.constants for s in slots):
            numbers = np.array([self.program.constants[s] for s in slots])[:, None]
            bits = numbers.view(np.int64)  # bit for bit: 0 and −0 are not the same here
            if np.all(bits == bits[0]):
                numbers = numbers[:1]  # one number for every row: broadcast as 1 × 1
            return ("const", numbers)
        source = self.where[slots[0]][0]
        rows = np.array([self.where[s][1] for s in slots])
        return ("rows", source, _index(rows))

    def _spans(self, item: tuple[Any, ...]) -> tuple[Any, ...]:
        """A sum or product step whose operands (after a number) begin with at least two
        consecutive rows of one group: that span kept for a reduction."""
        if item[0] != "step":
            return item
        if item[2] not in ("add", "mul"):
            return (*item, None)
        _, at, kind, args, payload, done = item
        start = 1 if args[0] in self.program.constants else 0
        first = self.where.get(args[start]) if start < len(args) else None
        if first is None or first[0][0] != "group":
            return (*item, None)
        end = start + 1
        while end < len(args) and self.where.get(args[end]) == (first[0], first[1] + end - start):
            end += 1
        if end - start < 2:
            return (*item, None)
        number = self.program.constants[args[0]] if start else None
        return (*item, (number, first[0], first[1], first[1] + end - start, args[end:]))

    def run(self, values: Sequence[Any], columns: slice, draws: dict[int, np.ndarray],
            rows: tuple[dict[int, int], np.ndarray] | None = None,
            scratch: dict[tuple[int, int, int], np.ndarray] | None = None) -> list[Any]:
        """The outputs for the trials ``columns`` of a block: ``values`` as for
        ``Program.evaluate`` (the block's 1-D arrays or numbers; only those read one by
        one are sliced), ``draws`` each run's draws (rows × trials, C-contiguous), of
        which the columns ``columns`` are read. ``scratch``
        (one per thread, kept between calls) holds the groups' arrays, reused slice after
        slice instead of fresh ones (whose pages the system would map anew each time)."""
        work: dict[tuple[int, int, int], np.ndarray] = {} if scratch is None else scratch
        # the slots this slice sets (the inputs read one by one, sliced; the steps'
        # results) over ``values`` and the program's numbers, which it only reads: a
        # list of every slot, made for each slice, would cost more than a wide slice's
        # arithmetic (10⁴ inputs: 3·10⁴ slots)
        filled, inputs = self.program._filled, len(values)
        slots: dict[int, Any] = {}
        for slot in self.direct:
            found = values[slot] if slot < inputs else filled[slot]
            slots[slot] = found[columns] if isinstance(found, np.ndarray) else found
        groups: dict[int, np.ndarray] = {}
        sources = {n: buffer[:, columns] for n, buffer in draws.items()}
        width = columns.stop - columns.start if sources else 0

        def value(slot: int) -> Any:
            place = self.where.get(slot)
            if place is None or place[0][0] == "input":
                if slot in slots:
                    return slots[slot]
                return values[slot] if slot < inputs else filled[slot]
            return groups[place[0][1]][place[1]]

        def operand(source: Source, key: tuple[int, int, int]) -> Any:
            if source[0] == "one":
                return value(source[1])
            if source[0] == "const":
                return source[1]
            (kind, number), index = source[1], source[2]
            rows = (sources if kind == "input" else groups)[number]
            if isinstance(index, slice):
                return rows[index]
            return np.take(rows, index, axis=0, out=_array(work, key, index.size, width))

        # with the compiled loop loaded, the groups of a fusion are not made: their values
        # shared by every row are kept (before they are released) for the loop
        kernel = compiled_rows() if self.fusions and width else None
        skipped = self.fused if kernel is not None else frozenset()
        shared: dict[int, Any] = {}
        with np.errstate(all="ignore"):
            for position, (item, (free_slots, free_groups)) in enumerate(
                    zip(self.items, self.release)):
                if item[0] == "group" and item[1] in skipped:
                    shared.update((s[1], value(s[1])) for s in item[4] if s[0] == "one")
                elif item[0] == "group":
                    _, number, kind, payload, operands, _ = item
                    out = _array(work, (number, -1, width), item[5], width)
                    groups[number] = _grouped(kind, payload, [
                        operand(s, (number, j, width)) for j, s in enumerate(operands)], out)
                elif kernel is not None and position in self.fusions:
                    slots[item[1]] = self.fusions[position].run(
                        kernel, item, shared, draws, columns, value,
                        _array(work, (-1 - position, -1, width),
                               self.fusions[position].registers, width))
                else:
                    _, at, kind, args, payload, _, span = item
                    slots[at] = self._step(at, kind, args, payload, span, value, groups,
                                           width, rows)
                for slot in free_slots:
                    slots.pop(slot, None)
                for number in free_groups:
                    groups.pop(number, None)
            return [value(i) for i in self.program.outputs]

    def _step(self, at: int, kind: str, args: tuple[int, ...], payload: Any,
              span: tuple[Any, ...] | None, value: Any, groups: dict[int, np.ndarray],
              width: int, rows: tuple[dict[int, int], np.ndarray] | None) -> Any:
        """One operation as ``Program.evaluate`` runs it, or a reduction over group rows."""
        ranges = self.program._ranges
        if rows is not None and at in ranges:
            found = _reduced(kind, ranges[at], rows,
                             {term: value(term) for term in ranges[at][3]})
            if found is not False:
                return found
        if span is not None and width >= 2:
            number, (_, group), low, high, rest = span
            ufunc = np.add if kind == "add" else np.multiply
            block = groups[group][low:high]
            total: Any = (ufunc.reduce(block, axis=0) if number is None
                          else ufunc.reduce(block, axis=0, initial=number))
            for term in rest:
                ufunc(total, value(term), out=total)
            return total
        return _apply(kind, [value(a) for a in args], payload)


@dataclass(frozen=True)
class _Fusion:
    """A sum or product over every row of a tree of groups, for ``_compiled_rows``: the
    rows' program (``code``, ``pool``), the values shared by every row (``vectors``: a
    slot's, or leading operands combined), the runs of draws read (at most two), the
    rows, the registers needed and the groups it stands for (not made while the compiled
    loop runs)."""

    code: np.ndarray
    pool: np.ndarray
    vectors: tuple[tuple[Any, ...], ...]
    runs: tuple[int, ...]
    rows: int
    registers: int
    groups: frozenset[int]
    multiply: bool

    def run(self, kernel: Any, item: tuple[Any, ...], shared: dict[int, Any],
            draws: dict[int, np.ndarray], columns: slice, value: Any,
            registers: np.ndarray) -> np.ndarray:
        """The step ``item`` (the sum or product, then the rest of its operands) for the
        trials ``columns`` of the runs' ``draws``, as ``Schedule._step`` gives it."""
        width = columns.stop - columns.start
        number, _, _, _, rest = item[6]
        vectors = np.empty((len(self.vectors), width))
        for row, (kind, *sources) in enumerate(self.vectors):
            found = [shared[s[1]] if s[0] == "one" else s[1] for s in sources]
            vectors[row] = found[0] if kind is None else functools.reduce(
                np.add if kind == "add" else np.multiply, found[1:], found[0])
        runs = [draws[n] for n in self.runs] or [vectors]
        total: np.ndarray = kernel.reduce_rows(
            self.code, self.pool, vectors, runs[0], runs[-1], columns, self.rows,
            self.multiply, number, np.empty(width), registers)
        ufunc = np.multiply if self.multiply else np.add
        for term in rest:
            ufunc(total, value(term), out=total)
        return total


def _fusions(items: list[tuple[Any, ...]], where: dict[int, Source],
             outputs: tuple[int, ...], ranges: dict[int, Any]) -> dict[int, _Fusion]:
    """Position of a step → its fusion, for each sum or product over every row of a group
    (not a reduction over a run's rows) whose group, and each group it reads rows of in
    one-to-one order (a slice of step ±1 over all of them), no other step or group reads
    nor is an output; its rows read at most two runs of draws, through slices."""
    groups = {item[1]: (position, item) for position, item in enumerate(items)
              if item[0] == "group"}
    readers: dict[int, list[tuple[int, int]]] = {}  # group → (position, operand) per read
    for position, item in enumerate(items):
        if item[0] == "group":
            for j, source in enumerate(item[4]):
                if source[0] == "rows" and source[1][0] == "group":
                    readers.setdefault(source[1][1], []).append((position, j))
        else:
            for slot in item[3]:
                place = where.get(slot)
                if place is not None and place[0][0] == "group":
                    readers.setdefault(place[0][1], []).append((position, -1))
    kept = {where[s][0][1] for s in outputs if s in where and where[s][0][0] == "group"}
    found: dict[int, _Fusion] = {}
    for position, item in enumerate(items):
        if item[0] != "step" or item[6] is None or item[1] in ranges:
            continue
        root, low, high = item[6][1][1], item[6][2], item[6][3]
        rows = groups[root][1][5]
        if low != 0 or high != rows or root in kept or readers[root] != [(position, -1)] * rows:
            continue
        tree = _Tree(groups, readers, kept)
        if tree.node(root, 0, 1, 0):
            found[position] = _Fusion(
                np.array(tree.code, dtype=np.int64).reshape(-1, 6), np.array(tree.pool),
                tuple(tree.vectors), tuple(tree.runs), rows, tree.registers,
                frozenset(tree.groups), item[2] == "mul")
    return found


class _Tree:
    """The program of one row of a tree of groups (``_compiled_rows``): a group's row r
    is row ``a + b·r`` of the tree's root."""

    def __init__(self, groups: dict[int, tuple[int, tuple[Any, ...]]],
                 readers: dict[int, list[tuple[int, int]]], kept: set[int]) -> None:
        self.all, self.readers, self.kept = groups, readers, kept
        self.code: list[int] = []
        self.pool: list[float] = []
        # rows of values shared by every row: (None, a slot's source), or (kind, sources)
        # combined as ``_grouped`` combines a group's leading ones
        self.vectors: list[tuple[Any, ...]] = []
        self.slots: dict[int, int] = {}  # a slot's row among them
        self.runs: list[int] = []
        self.groups: list[int] = []
        self.registers = 1

    def node(self, number: int, a: int, b: int, register: int) -> bool:
        """Code that leaves row ``a + b·r`` of group ``number`` in ``register``."""
        _, _, kind, payload, operands, _ = self.all[number][1]
        self.groups.append(number)
        if kind == "pow":
            operation = {-1.0: RECIPROCAL, 2.0: SQUARE}.get(payload, ROOT)
            base = operands[0]
            if base[0] != "rows" or base[1][0] != "group":
                return self.operand(base, number, 0, a, b, register, operation)
            if not self.operand(base, number, 0, a, b, register, SET):
                return False
            self.code += [operation, register, REGISTER, register, 0, 0]
            return True
        # the leading operands shared by every row, combined once per slice as
        # ``_grouped`` combines them (the same operations in the same order)
        lead = 1
        if _shared(operands[0]):
            while lead < len(operands) - 1 and _shared(operands[lead]):
                lead += 1
        first = 0
        if lead > 1:
            self.vectors.append((kind, *operands[:lead]))
            self.code += [SET, register, VECTOR, len(self.vectors) - 1, 0, 0]
            first = lead
        fold = ADD if kind == "add" else MUL
        return all(self.operand(source, number, j, a, b, register, SET if j == 0 else fold)
                   for j, source in enumerate(operands) if j >= first)

    def operand(self, source: Source, parent: int, j: int, a: int, b: int, register: int,
                operation: int) -> bool:
        if source[0] == "one":
            if source[1] not in self.slots:
                self.slots[source[1]] = len(self.vectors)
                self.vectors.append((None, source))
            self.code += [operation, register, VECTOR, self.slots[source[1]], 0, 0]
            return True
        if source[0] == "const":
            numbers = source[1][:, 0]
            base, step = (len(self.pool), 0) if numbers.size == 1 else (len(self.pool) + a, b)
            self.pool += numbers.tolist()
            self.code += [operation, register, CONSTANT, 0, base, step]
            return True
        (kind, number), index = source[1], source[2]
        if not isinstance(index, slice):
            return False
        start, step = index.start, index.step or 1
        base, stride = start + step * a, step * b
        if kind == "input":
            if number not in self.runs:
                if len(self.runs) == 2:
                    return False
                self.runs.append(number)
            run = (FIRST, SECOND)[self.runs.index(number)]
            self.code += [operation, register, run, 0, base, stride]
            return True
        rows = self.all[parent][1][5]
        if (self.readers[number] != [(self.all[parent][0], j)] or number in self.kept
                or abs(step) != 1 or self.all[number][1][5] != rows):
            return False
        if operation == SET:
            return self.node(number, base, stride, register)
        self.registers = max(self.registers, register + 2)
        if not self.node(number, base, stride, register + 1):
            return False
        self.code += [operation, register, REGISTER, register + 1, 0, 0]
        return True


def _array(work: dict[tuple[int, int, int], np.ndarray], key: tuple[int, int, int],
           rows: int, width: int) -> np.ndarray:
    """The scratch array ``key`` of rows × width, made once."""
    found = work.get(key)
    if found is None:
        found = work[key] = np.empty((rows, width))
    return found


def _grouped(kind: str, payload: Any, operands: list[Any], out: np.ndarray) -> np.ndarray:
    """``_apply`` of a group into ``out``: the same operations in the same order."""
    if kind == "pow":
        base = operands[0]
        if payload == -1.0:
            np.divide(1.0, base, out=out)
        elif payload == 2.0:
            np.multiply(base, base, out=out)
        else:
            np.sqrt(base, out=out)
        return out
    ufunc = np.add if kind == "add" else np.multiply
    # leading operands the same on every row (numbers, one value per trial) are combined
    # first, on a row's width: per element the same operations in the same order, and
    # passes over all rows saved (a unit factor × R × F, then × each row of m)
    lead = 1
    if _across(operands[0]):
        while lead < len(operands) - 1 and _across(operands[lead]):
            lead += 1
    first = functools.reduce(ufunc, operands[1:lead], operands[0])
    ufunc(first, operands[lead], out=out)
    for term in operands[lead + 1:]:
        ufunc(out, term, out=out)
    return out


def _shared(source: Source) -> bool:
    """Whether an operand's source gives the same value on every row (``_across``)."""
    return source[0] == "one" or (source[0] == "const" and int(source[1].shape[0]) == 1)


def _across(term: Any) -> bool:
    """Whether an operand is the same on every row: a number, one value per trial (1-D),
    or a constant of one value for all rows (1 × 1)."""
    return np.ndim(term) < 2 or np.shape(term)[0] == 1


def _levels(program: Program) -> list[list[tuple[Any, ...]]]:
    """The steps of ``program`` by level (inputs and numbers are level 0)."""
    depth: dict[int, int] = {}
    levels: list[list[tuple[Any, ...]]] = []
    for step in program._steps:
        level = 1 + max((depth.get(a, 0) for a in step[2]), default=0)
        depth[step[0]] = level
        while len(levels) < level:
            levels.append([])
        levels[level - 1].append(step)
    return levels


def _readers(program: Program) -> dict[int, tuple[int, int]]:
    """Slot → (its first reader, the position among that reader's operands)."""
    order: dict[int, tuple[int, int]] = {}
    for at, _, args, _, _ in program._steps:
        for position, slot in enumerate(args):
            order.setdefault(slot, (at, position))
    return order


def _alike(program: Program, level: list[tuple[Any, ...]], where: dict[int, Source],
           order: dict[int, tuple[int, int]]) -> list[tuple[str, list[tuple[Any, ...]]]]:
    """The steps of one level as groups of operations alike ("group") and the rest
    ("step"); alike: same kind, payload, number of operands and source per position.
    A group's rows follow the order in which they are read (a sum's operands in turn,
    so that it reduces over consecutive rows)."""
    buckets: dict[tuple[Any, ...], list[tuple[Any, ...]]] = {}
    single: list[tuple[Any, ...]] = []
    for step in level:
        _, kind, args, payload, _ = step
        if kind not in _GROUPED or (kind == "pow" and payload not in _POWERS):
            single.append(step)
            continue
        used = args[:1] if kind == "pow" else args
        key = (kind, payload, len(args), *(_origin(a, program, where) for a in used))
        buckets.setdefault(key, []).append(step)
    found: list[tuple[str, list[tuple[Any, ...]]]] = [("step", single)]
    for key, members in buckets.items():
        drawn = any(k[0] == "rows" for k in key[3:])
        if len(members) >= _SMALLEST and drawn and _distinct_rows(members, key, where):
            last = (len(program.symbols) + len(program.ops), 0)
            found.append(("group", sorted(members, key=lambda m: order.get(m[0], last))))
        else:
            found.append(("step", members))
    return found


def _origin(slot: int, program: Program, where: dict[int, Source]) -> tuple[Any, ...]:
    place = where.get(slot)
    if place is not None:
        return ("rows", place[0])
    if slot in program.constants:
        return ("const",)
    return ("one", slot)


def _distinct_rows(members: list[tuple[Any, ...]], key: tuple[Any, ...],
                   where: dict[int, Source]) -> bool:
    """Whether the members read different rows at some position drawn from rows (the
    same value at every position would be one operation repeated)."""
    return any(len({m[2][j] for m in members}) > 1
               for j, k in enumerate(key[3:]) if k[0] == "rows")


def _index(rows: np.ndarray) -> slice | np.ndarray:
    """A slice (a view, no copy) when the rows are evenly spaced, else the index array."""
    if rows.size > 1:
        step = int(rows[1] - rows[0])
        if step != 0 and np.all(np.diff(rows) == step):
            stop = int(rows[-1]) + (1 if step > 0 else -1)
            return slice(int(rows[0]), stop if stop >= 0 else None, step)
    return rows


def _releases(items: list[tuple[Any, ...]], outputs: tuple[int, ...],
              where: dict[int, Source]) -> list[tuple[list[int], list[int]]]:
    """After each item: the slots and the group arrays no later item (nor output) reads."""
    last_slot: dict[int, int] = {}
    last_group: dict[int, int] = {}
    for position, item in enumerate(items):
        for slot in _reads(item):
            place = where.get(slot)
            if place is not None and place[0][0] == "group":
                last_group[place[0][1]] = position
            elif place is None:
                last_slot[slot] = position
        if item[0] == "group":
            for source in item[4]:
                if source[0] == "rows" and source[1][0] == "group":
                    last_group[source[1][1]] = position
    keep_groups = {where[s][0][1] for s in outputs
                   if s in where and where[s][0][0] == "group"}
    release: list[tuple[list[int], list[int]]] = [([], []) for _ in items]
    for slot, position in last_slot.items():
        if slot not in outputs:
            release[position][0].append(slot)
    for group, position in last_group.items():
        if group not in keep_groups:
            release[position][1].append(group)
    return release


def _reads(item: tuple[Any, ...]) -> list[int]:
    if item[0] == "group":
        return [s[1] for s in item[4] if s[0] == "one"]
    return list(item[3])
