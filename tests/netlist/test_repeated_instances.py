"""Many instances of one subcircuit: every instance flattens to its own elements.

Instances whose parameters evaluate to the same values are made from the first one's
expansion (netlist/elaborate.py), so these checks write the expected flat circuit out by
hand — names X<k>.<card>, local nodes x<k>.<node>, values from the parameters — and
compare every element, its nodes, value and span, the warnings and the errors.

Every check runs twice: with the copies made by the code written for each template
(netlist/copies.py) and with them all made by the general loop (flat.copy_template).
"""

from __future__ import annotations

import pytest

from netcheck import ElaborationError, read_netlist
from netcheck.netlist import copies


@pytest.fixture(autouse=True, params=["written out", "general loop"])
def copier(request, monkeypatch):
    """Copies by the code written for their template, or all by the general loop."""
    if request.param == "general loop":
        monkeypatch.setattr(copies, "MOST_ELEMENTS", -1)
    return request.param

SECTION = """.subckt sect a b params: rs=1k cs=1n
R1 a m {rs}
C1 m 0 {cs}
R2 m b {rs*2}
L1 b gsup 1u
.ends sect
"""
#: the line of each card of SECTION (the netlist starts with a title and a .global line)
LINES = {"R1": 4, "C1": 5, "R2": 6, "L1": 7}


def _chain(params: list[str]) -> str:
    """A title, the section, and one instance per entry of ``params`` in a chain."""
    lines = ["repeated sections", ".global gsup"] + SECTION.splitlines()
    for k, p in enumerate(params):
        lines.append(f"X{k} n{k} n{k + 1} sect {p}".rstrip())
        lines.append(f"R{k}p n{k + 1} 0 {k + 1}k")
    lines += ["V1 n0 0 AC 1", "Vs gsup 0 0"]
    return "\n".join(lines) + "\n"


def _expected(k: int, rs: float, cs: float) -> list[tuple]:
    """Instance k's elements, written from the definition (independent of netcheck)."""
    x = f"x{k}"
    return [(f"X{k}.R1", (f"n{k}", f"{x}.m"), rs, LINES["R1"]),
            (f"X{k}.C1", (f"{x}.m", "0"), cs, LINES["C1"]),
            (f"X{k}.R2", (f"{x}.m", f"n{k + 1}"), 2 * rs, LINES["R2"]),
            (f"X{k}.L1", (f"n{k + 1}", "gsup"), 1e-6, LINES["L1"])]


class TestRepeatedInstances:
    def test_every_instance_its_own_names_nodes_values_and_spans(self):
        # values repeat (instances 0, 2, 4 alike; 1 and 3 alike) and one takes the defaults
        params = ["rs=2k cs=3n", "rs=5k", "rs=2k cs=3n", "rs=5k", "rs=2k cs=3n", ""]
        values = [(2e3, 3e-9), (5e3, 1e-9), (2e3, 3e-9), (5e3, 1e-9), (2e3, 3e-9),
                  (1e3, 1e-9)]
        ckt = read_netlist(_chain(params))
        want = []
        for k, (rs, cs) in enumerate(values):
            want += _expected(k, rs, cs)
            want.append((f"R{k}P", (f"n{k + 1}", "0"), (k + 1) * 1e3, 10 + 2 * k))
        want += [("V1", ("n0", "0"), None, 21), ("VS", ("gsup", "0"), None, 22)]
        got = [(e.name, e.nodes, None if e.letter == "V" else e.value, e.span.line)
               for e in ckt.elements]
        assert [g[:2] for g in got] == [w[:2] for w in want]
        assert [g[3] for g in got] == [w[3] for w in want]
        for g, w in zip(got, want):
            assert g[2] == pytest.approx(w[2], rel=1e-15) if w[2] is not None else g[2] is None
        # the span of a copied element is the whole definition card, as for the first
        first, copy = ckt.elements[1], ckt.elements[11]   # X0.C1 and X2.C1
        assert (copy.name, copy.span) == ("X2.C1", first.span)

    def test_same_words_different_values_in_scope(self):
        # the same instance text in two scopes of different parameter values: each keeps
        # its own scope's value (rs is a global .param redefined by the override)
        text = (".param r0=1k\n" + SECTION + "X1 a b sect rs={r0}\nX2 b c sect rs={r0}\n"
                "V1 a 0 AC 1\nR9 c 0 1k\nVs gsup 0 0\n")
        for r0 in (1e3, 4.7e3):
            ckt = read_netlist("t\n.global gsup\n" + text.replace("r0=1k", f"r0={r0:g}"))
            got = {e.name: e.value for e in ckt.elements}
            assert got["X1.R1"] == got["X2.R1"] == r0
            assert got["X1.R2"] == got["X2.R2"] == 2 * r0

    def test_the_same_card_text_in_two_scopes(self):
        # one instance card, word for word, inside two instances of an outer definition
        # whose parameter r0 differs: each copy takes its own outer scope's value
        text = ("nested\n.global gsup\n" + SECTION +
                ".subckt outer p q params: r0=1k\nX1 p q sect rs={r0}\n.ends outer\n"
                "XA n0 n1 outer r0=2k\nXB n1 n2 outer r0=3k\nXC n2 n3 outer r0=2k\n"
                "V1 n0 0 AC 1\nR9 n3 0 1k\nVs gsup 0 0\n")
        got = {e.name: e.value for e in read_netlist(text).elements}
        assert (got["XA.X1.R1"], got["XB.X1.R1"], got["XC.X1.R1"]) == (2e3, 3e3, 2e3)
        assert (got["XA.X1.R2"], got["XB.X1.R2"], got["XC.X1.R2"]) == (4e3, 6e3, 4e3)

    def test_a_port_node_named_only_by_the_instance_card(self):
        # X2's second port reaches nothing but the body's R2: two uses, no warning; a
        # plain card's node named once is warned at that card's field
        text = ("ports\n.subckt pair a b\nR1 a m 1k\nR2 m b 2k\n.ends pair\n"
                "X1 n0 n1 pair\nX2 n1 n2 pair\nR9 n2 0 1k\nR8 n1 lone 1k\nV1 n0 0 AC 1\n")
        warned = [(d.message, d.span.line, d.span.column)
                  for d in read_netlist(text).diagnostics if d.code == "netlist-152"]
        assert warned == [("node 'lone' has only one connection", 9, 7)]

    def test_one_connection_warning_for_every_instance(self):
        # a body node reached by one card only: netlist-152 once per instance, each at
        # the field of the body card that names it
        text = ("dangling\n.subckt tap a b\nR1 a b 1k\nR2 b stub 1k\n.ends tap\n"
                "X1 n0 n1 tap\nX2 n1 n2 tap\nX3 n2 n3 tap\nR9 n3 0 1k\nV1 n0 0 AC 1\n")
        ckt = read_netlist(text)
        warned = [(d.message, d.span.line, d.span.column) for d in ckt.diagnostics
                  if d.code == "netlist-152"]
        assert warned == [(f"node 'x{k}.stub' has only one connection", 4, 6)
                          for k in (1, 2, 3)]

    def test_ports_to_ground_or_shared_node(self):
        # ports tied to ground or to one node: the nodes are those of the card, as written
        text = ("tied\n.subckt pair a b\nR1 a m 1k\nR2 m b 2k\n.ends pair\n"
                "X1 n1 0 pair\nX2 n1 0 pair\nX3 n1 n1 pair\nX4 n1 x4.m pair\nV1 n1 0 AC 1\n")
        ckt = read_netlist(text)
        got = [(e.name, e.nodes) for e in ckt.elements if e.letter == "R"]
        assert got == [("X1.R1", ("n1", "x1.m")), ("X1.R2", ("x1.m", "0")),
                       ("X2.R1", ("n1", "x2.m")), ("X2.R2", ("x2.m", "0")),
                       ("X3.R1", ("n1", "x3.m")), ("X3.R2", ("x3.m", "n1")),
                       ("X4.R1", ("n1", "x4.m")), ("X4.R2", ("x4.m", "x4.m"))]


    def test_ground_written_gnd_on_repeated_cards(self):
        # the same words on each card, ground written gnd in any case: node 0 every time
        text = ("gnd\n.subckt pair a b\nR1 a m 1k\nR2 m b 2k\n.ends pair\n"
                "X1 n1 gnd pair\nX2 n2 GND pair\nX3 n3 Gnd pair\nR9 n1 n2 1k\nR8 n2 n3 1k\n"
                "V1 n1 0 AC 1\n")
        got = [(e.name, e.nodes) for e in read_netlist(text).elements if e.name[0] == "X"]
        assert got == [(f"X{k}.{r}", nodes) for k in (1, 2, 3) for r, nodes in
                       (("R1", (f"n{k}", f"x{k}.m")), ("R2", (f"x{k}.m", "0")))]


class TestErrorsAfterRepeats:
    def test_parameter_error_at_the_later_instance(self):
        text = _chain(["rs=2k", "rs=2k", "rs={nope}"])
        with pytest.raises(ElaborationError, match="undefined parameter 'nope'") as info:
            read_netlist(text)
        assert info.value.span.line == 13   # X2's card

    def test_value_error_at_the_definition_card(self):
        # the third instance gives the body a zero capacitor: refused at C1's value
        text = _chain(["cs=1n", "cs=1n", "cs=0"])
        with pytest.raises(ElaborationError, match=r"X2\.C1 has value 0") as info:
            read_netlist(text)
        assert (info.value.span.line, info.value.code) == (LINES["C1"], "netlist-110")

    def test_duplicate_instance_name(self):
        text = _chain(["rs=2k", "rs=2k"]).replace("X1 n1 n2", "x0 n1 n2")
        with pytest.raises(ElaborationError, match="duplicate element name X0") as info:
            read_netlist(text)
        assert info.value.span.line == 11

    def test_a_card_named_as_an_element_of_a_copy(self):
        # X1 is made from X0's template; a later instance card named as X1's R2 is
        # refused at that card, naming the definition card that made the first
        text = _chain(["rs=2k", "rs=2k"]).replace("V1 n0 0", "X1.R2 n0 n9 sect\nV1 n0 0")
        with pytest.raises(ElaborationError, match=r"duplicate element name X1\.R2 \(first "
                           r"defined at <text>:6\)") as info:
            read_netlist(text)
        assert info.value.span.line == 13

    def test_a_copy_whose_element_name_is_taken(self):
        # an instance named X1.R1 before X1: X1 cannot be copied (its R1 is taken) and is
        # expanded card by card, which refuses it at the definition's R1 card
        text = _chain(["rs=2k", "rs=2k"]).replace("X1 n1 n2", "X1.R1 n9 n8 sect\nX1 n1 n2")
        with pytest.raises(ElaborationError, match=r"duplicate element name X1\.R1") as info:
            read_netlist(text)
        assert info.value.span.line == LINES["R1"]

    def test_a_dotted_instance_name_meeting_a_copy(self):
        # X1 is a copy of X0 (definition a, whose resistor is called R.C1); the instance
        # X1.R of definition b names its capacitor C1: both are X1.R.C1
        text = ("dotted names\n.subckt a p q\nR.C1 p q 1k\nR2 q 0 1k\n.ends a\n"
                ".subckt b p q\nC1 p q 1n\nR3 q 0 1k\n.ends b\n"
                "X0 n0 n1 a\nX1 n1 n2 a\nX5 n2 n3 b\nX1.R n3 n4 b\nV1 n0 0 AC 1\n")
        with pytest.raises(ElaborationError, match=r"duplicate element name X1\.R\.C1 \(first "
                           r"defined at <text>:3\)") as info:
            read_netlist(text)
        assert info.value.span.line == 7   # b's C1 card, met while X1.R is expanded

    def test_dotted_instance_names_apart_from_copies(self):
        # X1.Y and X1 do not meet: every element is made, each under its own name
        text = ("dotted names\n.subckt a p q\nR1 p q 1k\nR2 q 0 1k\n.ends a\n"
                "X0 n0 n1 a\nX1.Y n1 n2 a\nX1 n2 n3 a\nX1.Z n3 n4 a\nV1 n0 0 AC 1\n")
        names = [e.name for e in read_netlist(text).elements]
        assert names == ["X0.R1", "X0.R2", "X1.Y.R1", "X1.Y.R2", "X1.R1", "X1.R2",
                         "X1.Z.R1", "X1.Z.R2", "V1"]


class TestCopierCode:
    def test_one_code_for_every_template_of_one_shape(self, monkeypatch, copier):
        # a section repeated in each of three banks, with two parameter sets: six templates
        # (one per bank and set) of one shape, so one compiled copier; every value its own
        monkeypatch.setattr(copies, "_COMPILED", {})
        text = ("banks\n.subckt sect a b params: rs=1k\nR1 a m {rs}\nC1 m 0 1n\n.ends sect\n"
                ".subckt bank in out\nX1 in m1 sect rs=2k\nX2 m1 m2 sect rs=3k\n"
                "X3 m2 m3 sect rs=2k\nX4 m3 out sect rs=3k\n.ends bank\n"
                "XB1 t0 t1 bank\nXB2 t1 t2 bank\nXB3 t2 t3 bank\nR9 t3 0 1k\nV1 t0 0 AC 1\n")
        got = {e.name: e.value for e in read_netlist(text).elements if e.letter == "R"}
        assert got == {f"XB{b}.X{k}.R1": (2e3 if k % 2 else 3e3) for b in (1, 2, 3)
                       for k in (1, 2, 3, 4)} | {"R9": 1e3}
        assert len(copies._COMPILED) == (1 if copier == "written out" else 0)

    def test_nothing_of_the_flattening_outlives_the_read(self):
        # the copiers' code refers to the flattening's tables; once the circuit is made
        # no reference cycle may keep them (a big netlist's tables would wait for the
        # garbage collector)
        import gc

        from netcheck.netlist.flat import Flat
        gc.collect()
        gc.disable()
        try:
            ckt = read_netlist(_chain(["rs=2k", "rs=2k", "rs=2k", "rs=5k", "rs=5k"]))
            assert len(ckt.elements) > 20
            assert not [o for o in gc.get_objects() if type(o) is Flat]
        finally:
            gc.enable()

