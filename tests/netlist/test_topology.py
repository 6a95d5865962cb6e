"""Structural checks that refuse circuits whose MNA equations are singular."""

from __future__ import annotations

import numpy as np
import pytest

from netcheck import ElaborationError, read_netlist
from netcheck.netlist import topology

# The three structural causes of a singular MNA matrix for every frequency (Ho, Ruehli
# & Brennan, IEEE Trans. Circuits Syst. 22(6), 1975; also Chua & Lin, "Computer-Aided
# Analysis of Electronic Circuits", 1975, ch. on topological conditions; from memory):
#  - a node set with no path to ground: its common-mode voltage is undetermined;
#  - a loop of voltage-defined branches: KVL on the loop fixes no loop current;
#  - a cut-set of current-defined branches: KCL fixes no node-set voltage.


@pytest.fixture(autouse=True, params=[300, 0], ids=["union-find", "csgraph"])
def components_by(request, monkeypatch):
    """Every check twice: the components by the union-find small circuits take, and by
    scipy.sparse.csgraph as a big netlist's are (netlist/topology.py, SPARSE_FROM)."""
    monkeypatch.setattr(topology, "SPARSE_FROM", request.param)
    return request.param


def refused(text: str) -> ElaborationError:
    with pytest.raises(ElaborationError) as info:
        read_netlist(text)
    return info.value


class TestFloating:
    def test_island(self):
        err = refused("t\nR1 a 0 1\nR2 b c 1\n")
        assert err.code == "netlist-111"
        assert "nodes b, c have no path to ground" in err.message
        assert str(err.span) == "<text>:3:1"

    def test_node_seen_only_by_a_controlling_input(self):
        err = refused("t\nV1 a 0 AC 1\nE1 o 0 sense 0 2\nR1 o 0 1\nR2 a 0 1\n")
        assert err.code == "netlist-111"
        assert "only to the controlling input of E1" in err.message

    def test_island_inside_a_subcircuit_is_named_hierarchically(self):
        err = refused("t\n.subckt s a\nR1 a 0 1\nR2 p q 1\n.ends\nX1 n s\nR0 n 0 1\n")
        assert "x1.p, x1.q" in err.message

    def test_capacitor_path_to_ground_is_enough(self):
        # at AC a capacitor is a finite admittance sC: the node is not floating
        read_netlist("t\nV1 a 0 AC 1\nC1 a b 1n\nC2 b 0 1n\n")

    def test_coupled_secondary_without_ground_is_floating(self):
        # magnetic coupling is not a conductive path
        err = refused("t\nV1 a 0 AC 1\nL1 a 0 1m\nL2 b c 1m\nK1 L1 L2 0.9\nR1 b c 1\n")
        assert err.code == "netlist-111"


class TestVoltageLoops:
    @pytest.mark.parametrize("text,culprit", [
        ("t\nV1 a 0 1\nV2 a 0 2\nR1 a 0 1\n", "V2"),                       # parallel
        ("t\nV1 a 0 1\nV2 a b 1\nV3 b 0 1\nR1 a 0 1\nR2 b 0 1\n", "V3"),     # triangle
        ("t\nV1 a 0 AC 1\nE1 a 0 b 0 2\nR1 a b 1\nR2 b 0 1\n", "E1"),       # V || E
        ("t\nV1 a 0 AC 1\nVS a m 0\nH1 m 0 VS 5\nR1 m 0 1\n", "H1"),        # V, VS, H loop
        ("t\nV1 a a 1\nR1 a 0 1\n", "V1"),                                  # shorted onto itself
    ])
    def test_loop(self, text, culprit):
        err = refused(text)
        assert err.code == "netlist-112"
        assert err.message.startswith(f"{culprit} closes a loop of voltage-defined elements")

    def test_series_sources_are_fine(self):
        read_netlist("t\nV1 a 0 AC 1\nV2 b a 1\nR1 b 0 1\n")


class TestCurrentCutSets:
    @pytest.mark.parametrize("text,nodes", [
        ("t\nI1 0 a AC 1\n", "node a connects"),
        ("t\nI1 0 a 1\nR1 a b 1\nR2 b a 1\nI2 b 0 1\n", "nodes a, b connect"),
        ("t\nV1 a 0 AC 1\nR1 a 0 1\nG1 o 0 a 0 1m\nE1 x 0 o 0 1\nR2 x 0 1\n", "node o connects"),
        ("t\nV1 a 0 AC 1\nR1 a 0 1\nVS a m 0\nRM m 0 1\nF1 o 0 VS 2\nE1 x 0 o 0 1\nR2 x 0 1\n",
         "node o connects"),
        ("t\nI1 0 a 1\nI2 a b 1\nR1 b 0 1\n", "node a connects"),             # series I
    ])
    def test_cut_set(self, text, nodes):
        err = refused(text)
        assert err.code == "netlist-113"
        assert nodes in err.message and "cut-set of current sources" in err.message

    def test_current_source_into_a_load_is_fine(self):
        read_netlist("t\nI1 0 a AC 1\nR1 a 0 1k\nG1 b 0 a 0 1m\nR2 b 0 1\n")


class TestAcceptedCircuitsAreRegular:
    """Circuits the checks accept really are solvable (the converse, on random networks
    against an independent rank computation, is in test_random_networks.py)."""

    @pytest.mark.parametrize("text", [
        "t\nV1 a 0 AC 1\nC1 a b 1n\nC2 b c 1n\nR1 c 0 1\n",
        "t\nI1 0 a AC 1\nC1 a 0 1n\n",
        "t\nV1 a 0 AC 1\nV2 b a 1\nR1 b 0 1\n",
    ])
    def test_solves(self, text):
        # direct LAPACK solve of the assembled system at a few frequencies
        resp = read_netlist(text).ac("V1" if "V1" in text else "I1", "a",
                                     freqs=np.array([1e2, 1e4, 1e6]))
        assert np.all(np.isfinite(resp.transfer))


class TestSensedCutSet:
    """A group joined to the rest only by current sources is regular when a controlled
    source senses a voltage across the cut (the group's voltage then enters a current)."""

    def test_self_sensing_g_card_is_a_conductance(self):
        # G1 drives 1 mA/V·v(in) into a; R1 takes it to b; G2 reads v(b) and sinks
        # 1 mS·v(b). Independent calculation by hand: v(b) = 1m·v(in)/1m = v(in),
        # v(a) = v(b) + 1k·1m·v(in) = 2·v(in).
        text = "t\nV1 in 0 AC 1\nR0 in 0 1k\nG1 0 a in 0 1m\nR1 a b 1k\nG2 b 0 b 0 1m\n"
        f = np.array([1e2, 1e4])
        circuit = read_netlist(text)
        np.testing.assert_allclose(circuit.ac("V1", "b", freqs=f).transfer, 1.0, rtol=1e-12)
        np.testing.assert_allclose(circuit.ac("V1", "a", freqs=f).transfer, 2.0, rtol=1e-12)

    def test_sensing_inside_the_group_only_is_still_refused(self):
        # G2 reads a voltage with both nodes inside the group: shifting the group's
        # voltages changes nothing, so the system is singular and the check says so
        err = refused("t\nV1 in 0 AC 1\nR0 in 0 1k\nG1 0 a in 0 1m\nR1 a b 1k\n"
                      "G2 b 0 a b 1m\n")
        assert err.code == "netlist-113"


class TestNodeNumbers:
    # the node table and the groups that do not reach ground, against a plain union-find
    # over the same links written here
    TEXTS = [
        "t\nR1 a 0 1\nR2 b c 1\nC3 c d 1n\nL4 e f 1u\nR5 f 0 1\n",
        "t\nV1 a 0 AC 1\nE1 o 0 sense 0 2\nR1 o 0 1\nR2 a 0 1\nR3 x y 1\nR4 y sense 1\n",
        "t\nR1 a b 1\nK1 L1 L2 0.5\nL1 a 0 1u\nL2 p q 1u\nR2 q r 1\n",
    ]

    @staticmethod
    def _reference_groups(elements, nodes):
        parent = {n: n for n in ("0",) + nodes}

        def find(n):
            while parent[n] != n:
                n = parent[n]
            return n
        for e in elements:
            for a, b in e.links if e.letter != "K" else ():
                parent[find(a)] = find(b)
        out: dict[str, list[str]] = {}
        for n in nodes:
            if find(n) != find("0"):
                out.setdefault(find(n), []).append(n)
        return list(out.values())

    @pytest.mark.parametrize("text", TEXTS)
    def test_numbers_and_groups(self, text):
        from netcheck.netlist.parse import load_netlist
        from netcheck.netlist import elaborate as elab
        got: dict = {}
        monkey = pytest.MonkeyPatch()
        monkey.setattr(elab, "check_topology",
                       lambda els, nodes, classes=None, numbered=None: got.update(
                           els=els, nodes=nodes, numbered=numbered))
        try:
            elab.elaborate(load_netlist(text))
        finally:
            monkey.undo()
        els, nodes = got["els"], got["nodes"]
        names = [n for e in els for n in e.nodes]
        assert nodes == tuple(n for n in dict.fromkeys(names) if n != "0")
        index, codes = got["numbered"]
        assert [list(index)[c] for c in codes] == names and index["0"] == 0
        two = [e for e in els if e.letter != "K"]
        want = self._reference_groups(two, nodes)
        assert topology._ungrounded(two, nodes, None, got["numbered"]) == want
        assert topology._ungrounded(two, nodes) == want
