"""Coordinates for a drawing plan: parts, op-amps, wires, labels, boxes.

:func:`layout_plan` gives every point of a :class:`placer.circuit.drawing.Plan`
an x (left to right, far enough apart for the parts and labels between
them) and every branch a level above or below the path, outside whatever
lies under it (its parts, labels and the branches nested inside it), so
that branches nest without crossing and no label meets another label or a
symbol. Units are the drawing's (schemdraw's: a two-terminal part is 3
units long by default, one unit is half an inch); y grows upwards.

Everything here is geometry; :mod:`placer.report.schematic` draws it.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from ..circuit.drawing import ABOVE, BELOW, Branch, Leg, Plan, Step

__all__ = ["FONT_PT", "Box", "PlacedPart", "PlacedOpamp", "LabelBox", "Terminal", "Layout",
           "text_width", "label_size", "layout_plan", "OPAMP_WIDTH", "OPAMP_PIN"]

#: Label font size in points; a drawing unit is 36 points.
FONT_PT = 10.0
_UNIT_PT = 36.0
_LINE = 1.25 * FONT_PT / _UNIT_PT      # line height in drawing units
GAP = 0.15                             # label to symbol or wire
CLEAR = 0.35                           # a branch over what lies under it
LEAD_IN, LEAD_OUT = 0.6, 0.5           # wire into and out of an op-amp
OPAMP_WIDTH = 2.5 * math.sqrt(3) / 2 + 1.25  # schemdraw's op-amp with its leads
OPAMP_PIN = 0.625                      # input pins above and below the centre
_OPAMP_HALF = 1.25
_OPAMP_LEAD = 0.625
_GROUND_DEPTH = 0.64
_TERMINAL_LEAD = 0.9
_EPS = 1e-6

#: Body length along the part and half its height across, by kind.
_BODY = {"resistor": (1.0, 0.25), "capacitor": (0.4, 0.3), "inductor": (1.0, 0.38),
         "vsource": (1.0, 0.5), "isource": (1.0, 0.5), "vcvs": (1.0, 0.5), "vccs": (1.0, 0.5),
         "cccs": (1.0, 0.5), "ccvs": (1.0, 0.5), "sense": (0.6, 0.3)}
# Character widths in em, rounded up from a wide sans-serif face so boxes
# hold the text whichever sans-serif a viewer substitutes.
_NARROW = set(" .,:;'!|()[]-")
_WIDE = set("MWmwΩµ%")


@dataclass(frozen=True)
class Box:
    """An axis-aligned box: x0 ≤ x1, y0 ≤ y1 (drawing units)."""

    x0: float
    y0: float
    x1: float
    y1: float

    def overlaps(self, other: Box, *, pad: float = 0.0) -> bool:
        """True when the interiors meet (boxes that only touch do not)."""
        return (self.x0 < other.x1 + pad - _EPS and other.x0 < self.x1 + pad - _EPS
                and self.y0 < other.y1 + pad - _EPS and other.y0 < self.y1 + pad - _EPS)


@dataclass(frozen=True)
class LabelBox:
    """A label: its lines, where its box sits, and how the text is anchored."""

    owner: str
    lines: tuple
    box: Box
    halign: str = "center"   # "center" or "left" (x is the box's left edge then)

    @property
    def anchor(self) -> tuple:
        y = (self.box.y0 + self.box.y1) / 2
        x = self.box.x0 if self.halign == "left" else (self.box.x0 + self.box.x1) / 2
        return (x, y)


@dataclass(frozen=True)
class PlacedPart:
    """A two-terminal symbol between two points (a two-port draws two of these)."""

    key: str
    element: str
    kind: str
    start: tuple
    end: tuple
    body: Box
    label: LabelBox | None


@dataclass(frozen=True)
class PlacedOpamp:
    """An op-amp: its pins (non-inverting, inverting, output) and its body."""

    name: str
    plus: tuple
    minus: tuple
    out: tuple
    flipped: bool            # True when the non-inverting input is on top
    body: Box
    label: LabelBox | None


@dataclass(frozen=True)
class Terminal:
    """An open terminal: the input, the output or a tap, with its name."""

    node: str
    at: tuple
    label: LabelBox


@dataclass(frozen=True)
class Layout:
    """A drawing's geometry; see :func:`layout_plan`."""

    parts: tuple
    opamps: tuple
    wires: tuple             # ((x, y), (x, y)) segments
    dots: tuple              # junction points
    grounds: tuple           # points where a ground symbol hangs
    terminals: tuple
    labels: tuple            # every LabelBox, parts', op-amps' and terminals'
    input_at: tuple = (0.0, 0.0)     # the input terminal
    output_at: tuple = (0.0, 0.0)    # the output terminal

    @property
    def bbox(self) -> Box:
        xs, ys = [], []
        for part in self.parts:
            xs += [part.body.x0, part.body.x1, part.start[0], part.end[0]]
            ys += [part.body.y0, part.body.y1, part.start[1], part.end[1]]
        for item in [o.body for o in self.opamps] + [lb.box for lb in self.labels]:
            xs += [item.x0, item.x1]
            ys += [item.y0, item.y1]
        for a, b in self.wires:
            xs += [a[0], b[0]]
            ys += [a[1], b[1]]
        for x, y in self.grounds:
            xs += [x - 0.25, x + 0.25]
            ys += [y - _GROUND_DEPTH, y]
        return Box(min(xs), min(ys), max(xs), max(ys))

    def shifted(self, dx: float, dy: float = 0.0) -> Layout:
        """The same layout moved by (dx, dy)."""
        def p(xy: tuple) -> tuple:
            return (xy[0] + dx, xy[1] + dy)

        def b(box: Box) -> Box:
            return Box(box.x0 + dx, box.y0 + dy, box.x1 + dx, box.y1 + dy)

        def moved(label: LabelBox) -> LabelBox:
            return LabelBox(label.owner, label.lines, b(label.box), label.halign)

        def lb(label: LabelBox | None) -> LabelBox | None:
            return None if label is None else moved(label)

        return Layout(
            parts=tuple(PlacedPart(q.key, q.element, q.kind, p(q.start), p(q.end), b(q.body),
                                   lb(q.label)) for q in self.parts),
            opamps=tuple(PlacedOpamp(o.name, p(o.plus), p(o.minus), p(o.out), o.flipped,
                                     b(o.body), lb(o.label)) for o in self.opamps),
            wires=tuple((p(s), p(e)) for s, e in self.wires),
            dots=tuple(p(d) for d in self.dots), grounds=tuple(p(g) for g in self.grounds),
            terminals=tuple(Terminal(t.node, p(t.at), moved(t.label)) for t in self.terminals),
            labels=tuple(lb(x) for x in self.labels), input_at=p(self.input_at),
            output_at=p(self.output_at))


def text_width(line: str) -> float:
    """Width of one line of label text in drawing units (an upper estimate)."""
    em = sum(0.36 if c in _NARROW else 0.92 if c in _WIDE else 0.68 for c in line)
    return em * FONT_PT / _UNIT_PT


def label_size(lines: tuple) -> tuple:
    """(width, height) of a label's box in drawing units."""
    if not lines:
        return (0.0, 0.0)
    return (max(text_width(x) for x in lines) + 0.1, _LINE * len(lines) + 0.06)


# -- the layout -------------------------------------------------------------------------

class _Placer:
    """The mutable state of one layout: positions, boxes, wires."""

    def __init__(self, plan: Plan, kinds: dict, labels: Callable[[str], tuple]) -> None:
        self.plan, self.kinds, self.labels = plan, kinds, labels
        self.index = {p.key: i for i, p in enumerate(plan.points)}
        self.x: dict = {}
        self.y: dict = {}
        self.boxes: list = []
        self.parts: list = []
        self.opamps: list = []
        self.wires: list = []
        self.grounds: list = []
        self.terminals: list = []
        self.attach: dict = {}      # (point key, side) → levels where wires leave its column
        self.inner: dict = {}       # (branch index, node index) → (x, y)

    # - sizes -
    def slot(self, key: str) -> float:
        """Room one horizontal part needs along its branch or path step."""
        length = _BODY[self.kinds[key]][0]
        width = label_size(self.labels(key))[0]
        return max(2.0, length + 1.0, width + 2 * GAP + 0.2)

    def leg_width(self, leg: Leg) -> float:
        """How far right of its column a leg's labels reach."""
        if leg.marker:
            return label_size((leg.marker,))[0] + 0.3
        widths = [label_size(self.labels(k))[0] + _BODY[self.kinds[k]][1] + GAP for k in leg.parts]
        return max(widths, default=0.3) + 0.3

    def legs_at(self, anchor: str) -> list:
        return [leg for leg in self.plan.legs if leg.anchor == anchor and leg.branch < 0]

    def comb(self, legs: list) -> list:
        """x offsets of several legs hanging from one anchor."""
        offsets, x = [], 0.0
        for leg in legs:
            offsets.append(x)
            x += self.leg_width(leg) + 0.4
        return offsets

    # - x -
    def place_x(self) -> None:
        plan = self.plan
        need: dict = {}

        def at_least(a: str, b: str, distance: float) -> None:
            i, j = sorted((self.index[a], self.index[b]))
            need[(i, j)] = max(need.get((i, j), 0.0), distance)

        for i in range(len(plan.points) - 1):
            at_least(plan.points[i].key, plan.points[i + 1].key, 0.6)
        for step in plan.steps:
            if step.opamp:
                width = label_size(self.labels(step.part))[0]
                at_least(step.start, step.pin_point, LEAD_IN)
                at_least(step.pin_point, step.end, max(OPAMP_WIDTH, width) + LEAD_OUT)
            else:
                at_least(step.start, step.end, self.slot(step.part))
        for branch in plan.branches:
            total = sum(self.slot(k) for k in branch.parts)
            for position in range(1, len(branch.nodes) - 1):
                legs = [g for g in plan.legs if g.branch >= 0 and
                        plan.branches[g.branch] is branch and g.index == position]
                if legs:
                    total += sum(self.leg_width(g) + 0.4 for g in legs)
            at_least(branch.start, branch.end, max(total, 0.6))
        for point in plan.points:
            legs = self.legs_at(point.key)
            if legs and self.index[point.key] + 1 < len(plan.points):
                offsets = self.comb(legs)
                reach = offsets[-1] + self.leg_width(legs[-1]) + 0.3
                at_least(point.key, plan.points[self.index[point.key] + 1].key, reach)
            if point.terminal:
                at_least(plan.points[self.index[point.key] - 1].key, point.key, 1.2)
        xs = [0.0] * len(plan.points)
        for j in range(1, len(plan.points)):
            xs[j] = max(xs[i] + d for (i, k), d in need.items() if k == j) if any(
                k == j for (_, k) in need) else xs[j - 1] + 0.6
        for point, x in zip(plan.points, xs):
            self.x[point.key] = x

    # - the path -
    def place_path(self) -> None:
        plan = self.plan
        y = 0.0
        self.y[plan.points[0].key] = y
        for step in plan.steps:
            y = self.y.get(step.start, 0.0)
            if step.opamp:
                self.place_opamp(step, y)
            else:
                self.y[step.end] = y
                self.add_part(step.part, (self.x[step.start], y), (self.x[step.end], y), ABOVE)
        for point in plan.points:
            self.y.setdefault(point.key, 0.0)

    def place_opamp(self, step: Step, y: float) -> None:
        side = self.plan.points[self.index[step.pin_point]].side or BELOW
        x_pin = self.x[step.pin_point]
        path_on_top = side == BELOW
        centre = y - OPAMP_PIN if path_on_top else y + OPAMP_PIN
        other = (x_pin, centre - OPAMP_PIN if path_on_top else centre + OPAMP_PIN)
        here = (x_pin, y)
        plus, minus = (here, other) if step.pin == 0 else (other, here)
        out = (x_pin + OPAMP_WIDTH, centre)
        body = Box(x_pin + _OPAMP_LEAD, centre - _OPAMP_HALF, x_pin + OPAMP_WIDTH - _OPAMP_LEAD,
                   centre + _OPAMP_HALF)
        lines = self.labels(step.part)
        width, height = label_size(lines)
        mid = (body.x0 + body.x1) / 2
        if side == BELOW:
            box = Box(mid - width / 2, body.y1 + GAP, mid + width / 2, body.y1 + GAP + height)
        else:
            box = Box(mid - width / 2, body.y0 - GAP - height, mid + width / 2, body.y0 - GAP)
        label = LabelBox(step.part, lines, box) if lines else None
        self.opamps.append(PlacedOpamp(step.part, plus, minus, out, plus[1] > minus[1], body,
                                       label))
        self.boxes += [body] + ([box] if label else [])
        self.y[step.pin_point] = other[1]
        self.y[step.end] = centre
        self.wires.append(((self.x[step.start], y), here))
        self.wires.append((out, (self.x[step.end], centre)))

    def add_part(self, key: str, start: tuple, end: tuple, side: int) -> None:
        """A part between two points; its label on `side` (horizontal) or to the right."""
        kind = self.kinds[key]
        length, half = _BODY[kind]
        cx, cy = (start[0] + end[0]) / 2, (start[1] + end[1]) / 2
        vertical = abs(start[0] - end[0]) < _EPS
        if vertical:
            body = Box(cx - half, cy - length / 2, cx + half, cy + length / 2)
        else:
            body = Box(cx - length / 2, cy - half, cx + length / 2, cy + half)
        lines = self.labels(key)
        width, height = label_size(lines)
        label = None
        if lines:
            if vertical:
                box = Box(body.x1 + GAP, cy - height / 2, body.x1 + GAP + width, cy + height / 2)
                label = LabelBox(key, lines, box, halign="left")
            elif side == ABOVE:
                label = LabelBox(key, lines, Box(cx - width / 2, body.y1 + GAP, cx + width / 2,
                                                 body.y1 + GAP + height))
            else:
                label = LabelBox(key, lines, Box(cx - width / 2, body.y0 - GAP - height,
                                                 cx + width / 2, body.y0 - GAP))
        element = key.split(":")[0]
        self.parts.append(PlacedPart(key, element, kind, start, end, body, label))
        self.boxes.append(body)
        if label:
            self.boxes.append(label.box)

    # - branches and legs -
    def outer(self, x0: float, x1: float, side: int) -> float | None:
        values = [b.y1 if side == ABOVE else b.y0 for b in self.boxes
                  if b.x0 < x1 - _EPS and b.x1 > x0 + _EPS]
        if not values:
            return None
        return max(values) if side == ABOVE else min(values)

    def place_branch(self, number: int, branch: Branch) -> None:
        side = branch.side
        xa, xb = self.x[branch.start], self.x[branch.end]
        ya, yb = self.y[branch.start], self.y[branch.end]
        half = max((_BODY[self.kinds[k]][1] for k in branch.parts), default=0.0)
        rise = 0.75 if branch.parts else 0.55
        base = max(ya, yb) if side == ABOVE else min(ya, yb)
        level = base + side * rise
        under = self.outer(xa, xb, side)
        if under is not None:
            level = max(level, under + half + CLEAR) if side == ABOVE else min(
                level, under - half - CLEAR)
        end_point = self.plan.points[self.index[branch.end]]
        self.attach.setdefault((branch.start, side), []).append(level)
        if not end_point.terminal:
            self.attach.setdefault((branch.end, side), []).append(level)
        else:
            self.y[branch.end] = level
        self.layout_row(number, branch, xa, xb, level)
        self.boxes.append(Box(xa, level - 0.02, xb, level + 0.02))

    def layout_row(self, number: int, branch: Branch, xa: float, xb: float, level: float) -> None:
        """The parts of a branch along its line, evenly spread, inner nodes between them."""
        slots = [self.slot(k) for k in branch.parts]
        gaps = []
        for position in range(1, len(branch.nodes) - 1):
            legs = [g for g in self.plan.legs if g.branch == number and g.index == position]
            gaps.append(sum(self.leg_width(g) + 0.4 for g in legs))
        spare = ((xb - xa) - sum(slots) - sum(gaps)) / (len(slots) + 1) if slots else 0.0
        x = xa + spare + self.nudge(xa, xb, slots, gaps, spare)
        previous = (xa, level)
        for i, key in enumerate(branch.parts):
            start, end = (x, level), (x + slots[i], level)
            self.wires.append((previous, start))
            self.add_part(key, start, end, branch.side)
            x += slots[i]
            if i < len(gaps):
                node = (x + spare / 2, level)
                self.wires.append((end, node))
                self.inner[(number, i + 1)] = node
                previous = node
                x = node[0] + gaps[i] + spare / 2
            else:
                previous = end
        self.wires.append((previous, (xb, level)))

    def nudge(self, xa: float, xb: float, slots: list, gaps: list, spare: float) -> float:
        """A shift of a row's parts that keeps their ends off any column they pass.

        Only a branch that has to cross another one passes a column; an end
        of a part on it would look like a junction.
        """
        inside = [x for x in self.x.values() if xa + _EPS < x < xb - _EPS]
        if not inside or not slots:
            return 0.0
        for shift in (0.0, 0.3, -0.3, 0.6, -0.6, 0.9, -0.9):
            if abs(shift) > spare:
                continue
            x, ends = xa + spare + shift, []
            for i, slot in enumerate(slots):
                ends += [x, x + slot]
                x += slot + (gaps[i] + spare if i < len(gaps) else 0.0)
            if all(abs(e - c) > 0.25 for e in ends for c in inside):
                return shift
        return 0.0

    def place_legs(self, legs: list, anchor: tuple, side: int, *, column: bool) -> float:
        """Legs from one anchor, side by side; returns the level they hang from."""
        offsets = self.comb(legs)
        x, y = anchor
        right = x + offsets[-1] + self.leg_width(legs[-1])
        under = self.outer(x - 0.35, right, side)
        top = y + side * 0.5
        if under is not None:
            top = min(top, under - GAP - 0.1) if side == BELOW else max(top, under + GAP + 0.1)
        if not column:
            self.wires.append(((x, y), (x, top)))
        if len(legs) > 1:
            for a, b in zip(offsets, offsets[1:]):
                self.wires.append(((x + a, top), (x + b, top)))
        for leg, offset in zip(legs, offsets):
            self.hang(leg, (x + offset, top), side)
        return top

    def hang(self, leg: Leg, top: tuple, side: int) -> None:
        x, y = top
        for key in leg.parts:
            length = _BODY[self.kinds[key]][0]
            height = label_size(self.labels(key))[1]
            span = max(1.6, length + 0.9, height + 0.5)
            self.add_part(key, (x, y), (x, y + side * span), ABOVE)
            y += side * span
        if leg.marker:
            end = (x, y + side * 0.4)
            self.wires.append(((x, y), end))
            self.add_terminal(leg.marker, end, "right")
        else:
            self.grounds.append((x, y))
            self.boxes.append(Box(x - 0.25, y - _GROUND_DEPTH, x + 0.25, y))

    def add_terminal(self, name: str, at: tuple, where: str) -> None:
        width, height = label_size((name,))
        x, y = at
        if where == "left":
            box = Box(x - 0.15 - width, y - height / 2, x - 0.15, y + height / 2)
        else:
            box = Box(x + 0.15, y - height / 2, x + 0.15 + width, y + height / 2)
        label = LabelBox(f"terminal:{name}", (name,), box, halign="left")
        self.terminals.append((name, at, label))
        self.boxes += [box, Box(x - 0.12, y - 0.12, x + 0.12, y + 0.12)]

    def place_around(self) -> None:
        """Branches and legs, innermost first, each outside what it encloses."""
        plan = self.plan
        span = {i: self.x[b.end] - self.x[b.start] for i, b in enumerate(plan.branches)}
        items: list[tuple[float, int, int | tuple[str, int, int, int]]] = [
            (span[i], 0, i) for i in span]
        anchors: dict[tuple[str, int, int, int], list[Leg]] = {}
        for leg in plan.legs:
            anchors.setdefault((leg.anchor, leg.branch, leg.index, leg.side), []).append(leg)
        for group, legs in anchors.items():
            anchor, branch, _, side = group
            if branch >= 0:
                rank = span[branch] + 0.001
            else:
                rank = max((span[i] for i, b in enumerate(plan.branches) if b.side == side and
                            anchor in (b.start, b.end)), default=0.0) + 0.001
            items.append((rank, 1, group))
        for _, _, key in sorted(items, key=lambda item: (item[0], item[1], str(item[2]))):
            if isinstance(key, int):    # a branch (0 in the middle of its item), else legs
                self.place_branch(key, plan.branches[key])
            else:
                anchor, branch, index, side = key
                if branch >= 0:
                    where = self.inner[(branch, index)]
                else:
                    where = (self.x[anchor], self.y[anchor])
                    levels = self.attach.get((anchor, side), [])
                    if levels:
                        where = (where[0], min(levels) if side == BELOW else max(levels))
                top = self.place_legs(anchors[key], where, side, column=branch < 0)
                if branch < 0:
                    self.attach.setdefault((anchor, side), []).append(top)

    def columns(self) -> None:
        """Each point's wire up or down to every level where something leaves it."""
        for (key, side), levels in self.attach.items():
            x, y = self.x[key], self.y[key]
            stops = sorted(set(levels), key=lambda level: side * level)
            previous = y
            for level in stops:
                self.wires.append(((x, previous), (x, level)))
                previous = level

    def terminals_out(self) -> None:
        plan = self.plan
        first = plan.points[0]
        self.add_terminal(first.node, (self.x[first.key] - _TERMINAL_LEAD, self.y[first.key]),
                          "left")
        self.wires.append(((self.x[first.key] - _TERMINAL_LEAD, self.y[first.key]),
                           (self.x[first.key], self.y[first.key])))
        out = plan.points[self.index[plan.output]]
        if out.terminal:
            self.add_terminal(out.node, (self.x[out.key], self.y[out.key]), "right")
        elif not any(leg.marker == out.node and leg.anchor == out.key for leg in plan.legs):
            legs = self.legs_at(out.key)
            reach = self.comb(legs)[-1] + self.leg_width(legs[-1]) if legs else 0.0
            at = (self.x[out.key] + max(_TERMINAL_LEAD, reach), self.y[out.key])
            self.wires.append(((self.x[out.key], self.y[out.key]), at))
            self.add_terminal(out.node, at, "right")


def layout_plan(plan: Plan, kinds: dict, labels: Callable[[str], tuple]) -> Layout:
    """Coordinates for every part, op-amp, wire and label of a plan.

    Parameters
    ----------
    plan : placer.circuit.drawing.Plan
    kinds : dict
        Part key → element kind (``"sense"`` for a two-port's control side).
    labels : callable
        Part or op-amp key → the lines of its label (empty: no label).

    Returns
    -------
    Layout
        Wires are split wherever another wire or a terminal ends on them, so
        every connection is two ends meeting; a dot marks each point where
        three or more ends meet.
    """
    placer = _Placer(plan, kinds, labels)
    placer.place_x()
    placer.place_path()
    placer.place_around()
    placer.columns()
    placer.terminals_out()
    terminals = tuple(Terminal(name, at, label) for name, at, label in placer.terminals)
    ends = [p.start for p in placer.parts] + [p.end for p in placer.parts]
    for opamp in placer.opamps:
        ends += [opamp.plus, opamp.minus, opamp.out]
    ends += list(placer.grounds) + [t.at for t in terminals]
    wires = _split(placer.wires, ends)
    labels_all = [p.label for p in placer.parts if p.label] + \
                 [o.label for o in placer.opamps if o.label] + [t.label for t in terminals]
    plan_out = plan.points[placer.index[plan.output]].node
    output_at = next((t.at for t in terminals if t.node == plan_out and t.label.owner ==
                      f"terminal:{plan_out}"), terminals[-1].at)
    input_at = next(t.at for t in terminals if t.node == plan.points[0].node)
    return Layout(parts=tuple(placer.parts), opamps=tuple(placer.opamps), wires=wires,
                  dots=_dots(wires, ends), grounds=tuple(placer.grounds), terminals=terminals,
                  labels=tuple(labels_all), input_at=input_at, output_at=output_at)


def _key(point: tuple) -> tuple:
    return (round(point[0], 6), round(point[1], 6))


def _split(wires: list, ends: list) -> tuple:
    """Drop empty and repeated wires (every junction is built end to end)."""
    unique: dict[tuple[tuple, ...], tuple[tuple, tuple]] = {}
    for p, q in wires:
        if _key(p) != _key(q):
            unique.setdefault(tuple(sorted((_key(p), _key(q)))), (p, q))
    return tuple(unique.values())


def _dots(wires: tuple, ends: list) -> tuple:
    count: dict = {}
    for p, q in wires:
        for point in (p, q):
            count[_key(point)] = count.get(_key(point), 0) + 1
    for point in ends:
        if _key(point) in count:
            count[_key(point)] += 1
    return tuple(k for k, n in count.items() if n >= 3)
