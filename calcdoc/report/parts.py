"""Package content for contacts, diodes, op-amps, capacitors and coils.

What this module adds to the package, as layout-neutral blocks
(:class:`Text`, :class:`Grid`) that the package lays out with its own
paragraph and table styles:

- method notes: the DC models (capacitors open, coils shorts at DC steady
  state, switching transients out of scope), contacts, the ideal op-amp
  and how device states are found (:func:`method_notes`);
- formulation notes: the linear model each device is solved with in its
  state, and each op-amp's virtual short (:func:`formulation_notes`);
- per case, in the verification: every device's state with the tests
  that confirm it and their margins, each op-amp's virtual short and
  output, contacts and stored energy (:func:`case_blocks`);
- input text: every number key of an element and every rating
  (:func:`value_text`, :func:`rating_text`).

Layout only: every number comes from the results.
"""

from __future__ import annotations

from dataclasses import dataclass

from calcdoc.format import eng
from calcdoc.model.elements import KINDS, RATING_KEYS


@dataclass(frozen=True)
class Text:
    """A paragraph: ``style`` is ``body``, ``small`` or ``lead`` (a bold run-in heading)."""

    text: str
    style: str = "body"


@dataclass(frozen=True)
class Grid:
    """A table: header, rows of strings, relative column widths, failing row indices."""

    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    widths: tuple[float, ...]
    failing: tuple[int, ...] = ()


Block = Text | Grid

TRANSIENTS = (
    "DC steady state: every capacitor is an open circuit (no current; its voltage, its stored "
    "energy ½·C·V² and its voltage rating are reported) and every coil is a short circuit "
    "through its winding resistance, or an ideal short where none is given (its current, its "
    "I²·R dissipation and its stored energy ½·L·I² are reported). Switching transients (coil "
    "turn-off, contact bounce, inrush into capacitors) are out of scope of this record."
)
CONTACTS = (
    "Contacts and switches are closed (an ideal short, or their contact resistance where given) "
    "or open (no current) as each operating case states; an open contact's voltage is checked "
    "against its voltage rating."
)
OPAMPS = (
    "Operational amplifiers are ideal: their two inputs are held at equal voltage (the virtual "
    "short V(+) − V(−) = 0 is the op-amp's own equation), no current enters either input, and "
    "the output supplies whatever current the circuit needs (an unknown of the equations). Its "
    "voltage is V(output) − V(reference) and its current flows from the output to the reference "
    "node, so an output that sources current shows a negative current and delivers power. The "
    "output range and output current are design checks; an ideal model says nothing of offset, "
    "gain error or stability."
)
STATES = (
    "Diodes, LEDs and zeners are piecewise linear: blocking (no current while −Vbr ≤ V ≤ Vf), "
    "conducting (V = Vf + R·I, needing I ≥ 0) or, for a zener, in breakdown (V = −Vbr + R·I, "
    "needing I ≤ 0), with Vf the forward voltage, Vbr the breakdown voltage and R the slope "
    "resistance. Their states are not assumed: they are found by solving the linear "
    "complementarity problem of the circuit with Lemke's complementary pivoting method, which "
    "ends after finitely many pivots (with a positive slope resistance in every device and no "
    "controlled sources the solution is unique; should the method end without a solution, every "
    "combination of states is tried for small circuits). The circuit is then solved in the "
    "states found, and each device's test is evaluated on that solution and listed with its "
    "margin in the verification, so the assumed model of every device is confirmed."
)


def _types(results) -> set[str]:
    return {e.type for e in results.project.elements}


def method_notes(results) -> list[str]:
    """Method paragraphs for the parts present (empty for resistor-and-source circuits)."""
    kinds = [KINDS[t] for t in _types(results)]
    out = []
    if any(k.energy for k in kinds):
        out.append(TRANSIENTS)
    if any(k.settable for k in kinds):
        out.append(CONTACTS)
    if any(k.control == "nodes" and not k.has_value for k in kinds):
        out.append(OPAMPS)
    if any(k.searched for k in kinds):
        out.append(STATES)
    return out


def formulation_notes(case) -> list[str]:
    """The linear model of each device in its state, and each op-amp's virtual short."""
    net = case.netlist
    absent = set(net.absent)
    out = []
    for j, name in enumerate(net.names):
        kind = KINDS[net.types[j]]
        state = net.state(j)
        if kind.searched or kind.settable:
            law = kind.laws[state]
            what = (
                "no equation of its own: it adds nothing to KCL"
                if law.fixes_current
                else ("its branch equation below")
            )
            out.append(f"{name} ({kind.words}), {state}: {law.text} ({what}).")
        elif kind.control == "nodes" and not kind.has_value and j in net.control_nodes:
            plus, minus = (net.nodes[k] for k in net.control_nodes[j])
            out.append(
                f"{name} ({kind.words}): virtual short V({plus}) − V({minus}) = 0 (its branch "
                f"equation), no input current; its output current I({name}) is an unknown."
            )
        elif kind.energy == "voltage":
            out.append(f"{name} ({kind.words}): open at DC, I = 0 (no equation of its own).")
        elif kind.energy == "current":
            law = kind.law(state)
            ideal = law.i is not None and (j, law.i.key) in absent
            model = "an ideal short, V = 0" if ideal else f"its winding resistance, {law.text}"
            out.append(f"{name} ({kind.words}): at DC {model}.")
    return out


def case_blocks(case, project, sig: int) -> list[Block]:
    """Device states, op-amps, contacts and stored energy of one solved case."""
    net, br = case.netlist, case.branches
    out: list[Block] = []
    s = case.states
    if s is not None:
        out.append(Text("Device states", "lead"))
        out.append(
            Text(
                f"Found by {s.method} in {s.iterations} pivot{'s' if s.iterations != 1 else ''} over "
                f"{s.pieces} conducting piece{'s' if s.pieces != 1 else ''}, then confirmed on the "
                "solution: each test below must hold (margin ≥ 0)."
                + (f" {s.note[0].upper()}{s.note[1:]}." if s.note else ""),
                "small",
            )
        )
        rows, failing, exact = [], [], []
        for d in s.devices:
            for k, t in enumerate(d.tests):
                unit = "A" if t.quantity == "current" else "V"
                rows.append(
                    (
                        d.element if k == 0 else "",
                        d.state if k == 0 else "",
                        d.law if k == 0 else "",
                        t.text,
                        eng(t.value, unit, sig),
                        eng(t.limit, unit, sig),
                        eng(t.margin, unit, sig),
                        "holds" if t.holds else "FAILS",
                    )
                )
                if not t.holds:
                    failing.append(len(rows) - 1)
                if t.margin == 0:
                    exact.append(d.element)
        out.append(
            Grid(
                ("Device", "State", "Model", "Test", "Value", "Threshold", "Margin", ""),
                tuple(rows),
                (0.9, 0.9, 1.3, 0.8, 1, 1, 1, 0.6),
                tuple(failing),
            )
        )
        if exact:
            out.append(
                Text(
                    f"{', '.join(sorted(set(exact)))}: exactly at a threshold (margin 0), where "
                    "either neighbouring state gives the same solution.",
                    "small",
                )
            )
    index = {n: i for i, n in enumerate(net.nodes)}
    amps, contacts, stores = [], [], []
    for j, e in enumerate(project.elements):
        kind = e.kind
        if kind.control == "nodes" and not kind.has_value and e.control_nodes:
            vp = float(br.node_voltage[index[e.control_nodes[0]]])
            vm = float(br.node_voltage[index[e.control_nodes[1]]])
            amps.append(
                (
                    e.name,
                    f"{e.control_nodes[0]}: {eng(vp, 'V', sig)}",
                    f"{e.control_nodes[1]}: {eng(vm, 'V', sig)}",
                    eng(vp - vm, "V", sig),
                    eng(float(br.voltage[j]), "V", sig),
                    eng(float(br.current[j]), "A", sig),
                )
            )
        elif kind.settable:
            contacts.append(
                (
                    e.name,
                    net.state(j),
                    eng(float(br.voltage[j]), "V", sig),
                    eng(float(br.current[j]), "A", sig),
                )
            )
        if kind.energy is not None and br.energy is not None:
            stores.append(
                (
                    e.name,
                    kind.words,
                    eng(float(br.voltage[j]), "V", sig),
                    eng(float(br.current[j]), "A", sig),
                    eng(float(br.energy[j]), "J", sig),
                )
            )
    if amps:
        out.append(Text("Op-amps: virtual short and output", "lead"))
        out.append(
            Grid(
                ("Op-amp", "V(+)", "V(−)", "V(+) − V(−)", "Output voltage", "Output current"),
                tuple(amps),
                (0.9, 1.3, 1.3, 1, 1.1, 1.1),
            )
        )
    if contacts:
        out.append(Text("Contacts", "lead"))
        out.append(Grid(("Contact", "State", "Voltage", "Current"), tuple(contacts), (1, 1, 1, 1)))
    if stores:
        out.append(Text("Stored energy at DC", "lead"))
        out.append(
            Grid(
                ("Element", "Type", "Voltage", "Current", "Energy"),
                tuple(stores),
                (1, 1.2, 1, 1, 1),
            )
        )
    return out


def value_text(e, sig: int, plain: str) -> str:
    """An element's value for the inputs table: every number key given, its state and its
    ranges; ``plain`` (the main value alone) where there is nothing more to say."""
    kind = e.kind
    if not (e.more or e.windows or kind.states or not e.main_given or kind.knees):
        return plain
    parts = []
    for key, value in e.numbers:
        k = kind.key(key)
        name = "" if key == kind.main.name and not kind.knees else f"{k.words or key} "
        parts.append(f"{name}{eng(float(value), k.unit, sig)}")
    for key, low, high in e.windows:
        w = next(x for x in kind.windows if x.name == key)
        parts.append(f"{w.words} {eng(float(low), w.unit, sig)} to {eng(float(high), w.unit, sig)}")
    if kind.settable and e.state:
        parts.append(e.state)
    return "\n".join(parts) or "—"


def rating_text(e, plain: str) -> str:
    """Every rating given, one a line, the unit naming power, voltage and current and a
    word naming the others (``100.0 V reverse``); ``plain`` where only the first three are given."""
    given = e.rating.given()
    if all(q in ("power", "voltage", "current") for q, _ in given):
        return plain
    return "\n".join(
        eng(float(v), RATING_KEYS[q].unit)
        + ("" if q in ("power", "voltage", "current") else " " + RATING_KEYS[q].words.split()[0])
        for q, v in given
    )


def across_rows(limits, sig: int) -> list[tuple[str, str]]:
    """``[[limits.across]]`` windows for the limits table."""
    out = []
    for w in limits.across:
        ends = [
            f"≥ {eng(float(w.min), 'V', sig)}" if w.min is not None else "",
            f"≤ {eng(float(w.max), 'V', sig)}" if w.max is not None else "",
        ]
        what = f"V({w.nodes[0]}) − V({w.nodes[1]}) window ({w.name})"
        out.append((what, " and ".join(x for x in ends if x)))
    return out


__all__ = [
    "Block",
    "Grid",
    "Text",
    "across_rows",
    "case_blocks",
    "formulation_notes",
    "method_notes",
    "rating_text",
    "value_text",
]
