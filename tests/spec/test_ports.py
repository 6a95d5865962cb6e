"""Ports and terminations ([ports], the ``port`` limit kind) against closed forms.

References (each named beside its check):
* reflection coefficient Γ = (Z − R)/(Z + R), return loss −20 log10 |Γ|, VSWR
  (1 + |Γ|)/(1 − |Γ|) (Pozar, *Microwave Engineering*, 4th ed., §2.3, from memory);
* transducer gain G_T = P_load / P_available = |V_out/E|²·4Rs/RL, and for a lossless
  network G_T = 1 − |Γ_in|² and |Γ_out| = |Γ_in| (conservation of power; Pozar §4.3 and
  §11.1, from memory);
* the matched T attenuator (common practice, no source): for loss K = 10^(A/20) in a
  Z0 system, series arms Z0(K − 1)/(K + 1) and shunt arm 2Z0·K/(K² − 1); it reads
  Z0 at both ports and G_T = −A dB.
Every curve below is evaluated here in numpy from the element values, independently of
netcheck's solver.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from netcheck.analyses.nominal import check_spec
from netcheck.analyses.tolerance import toleranced_parts
from netcheck.exceptions import SpecError
from netcheck.netlist.ports import PORT_ELEMENTS
from netcheck.result import Status
from netcheck.spec import parse_spec
from netcheck.spec.tolerances import Tolerances

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = ROOT / "specs" / "qm_rf10_match.toml"
RS, RL = 50.0, 200.0
L1, C1 = 1.4e-6, 140e-12  # the sample's parts (sample_netlists/qm_rf10_match.cir)
BAND = (9.5e6, 10.5e6)


def z_in(f, l=L1, c=C1):
    """The L-match seen from the antenna: jωL in series with RL ‖ 1/(jωC)."""
    w = 2 * np.pi * np.asarray(f)
    return 1j * w * l + RL / (1 + 1j * w * RL * c)


def z_out(f, l=L1, c=C1):
    """Seen from the receiver: 1/(jωC) ‖ (Rs + jωL)."""
    w = 2 * np.pi * np.asarray(f)
    return 1 / (1j * w * c + 1 / (RS + 1j * w * l))


def gamma(z, r):
    return (z - r) / (z + r)  # Pozar §2.3


def band_max(fn, lo=BAND[0], hi=BAND[1]):
    """The maximum of fn over [lo, hi]: a dense grid, then a bounded search around it."""
    f = np.linspace(lo, hi, 20001)
    k = int(np.argmax(fn(f)))
    a, b = f[max(k - 1, 0)], f[min(k + 1, f.size - 1)]
    if k in (0, f.size - 1):
        return float(fn(f[k]))
    got = minimize_scalar(lambda x: -fn(x), bounds=(a, b), method="bounded",
                          options={"xatol": 1e-3})
    return float(-got.fun)


def write(tmp_path: Path, netlist: str, body: str, ports: str) -> str:
    (tmp_path / "n.cir").write_text(netlist)
    spec = tmp_path / "s.toml"
    spec.write_text(f'title = "ports"\nnetlist = "n.cir"\n{ports}\n[sweep]\nstart = "1meg"\n'
                    f'stop = "100meg"\npoints_per_decade = 50\n{body}')
    return str(spec)


def rows(result) -> dict:
    return {r.name: r for r in result.limits}


def test_the_sample_match_against_its_closed_forms():
    result = check_spec(str(SAMPLE))
    assert result.error is None and result.status is Status.PASS
    got = rows(result)
    # return loss at the input: its band minimum is where |Γ_in| is largest
    worst_gamma = band_max(lambda f: np.abs(gamma(z_in(f), RS)))
    rl = got["return loss at the input port 9.500–10.50 MHz"]
    assert rl.measured == pytest.approx(-20 * math.log10(worst_gamma), abs=1e-6)
    # VSWR at the output from Γ_out against RL; lossless: |Γ_out| = |Γ_in| (Pozar)
    out_gamma = band_max(lambda f: np.abs(gamma(z_out(f), RL)))
    assert out_gamma == pytest.approx(worst_gamma, rel=1e-6)
    vswr = got["VSWR at the output port 9.500–10.50 MHz"]
    assert vswr.measured == pytest.approx((1 + out_gamma) / (1 - out_gamma), rel=1e-6)
    # transducer gain: lossless, so 1 − |Γ_in|² (conservation of power), lowest where
    # |Γ_in| is largest
    tg = got["transducer gain 9.500–10.50 MHz"]
    assert tg.measured == pytest.approx(10 * math.log10(1 - worst_gamma ** 2), abs=1e-9)
    # |Z_in| over 9.9–10.1 MHz: the nearest bound decides
    zmag = got["|Z| at the input port 9.900–10.10 MHz"]
    lo = -band_max(lambda f: -np.abs(z_in(f)), 9.9e6, 10.1e6)
    hi = band_max(lambda f: np.abs(z_in(f)), 9.9e6, 10.1e6)
    assert zmag.measured == pytest.approx(lo if lo - 45 < 55 - hi else hi, rel=1e-7)


def test_the_match_is_perfect_where_its_design_says():
    # 1.4 µH and 140 pF match 50 Ω to 200 Ω where ωL = Q·Rs with Q = ωRL·C (the L-match
    # design equations, common practice, no source): ω² = 1/(LC) − 1/(RL²C²)
    w0 = math.sqrt(1 / (L1 * C1) - 1 / (RL * C1) ** 2)
    assert abs(gamma(z_in(w0 / (2 * math.pi)), RS)) < 1e-12
    spec = SAMPLE.read_text("utf-8").split("[[limits]]")[0] + (
        '[[limits]]\nkind = "port"\nquantity = "return_loss"\nport = "input"\n'
        f'band = ["{w0 / (2 * math.pi) * 0.9999:.6g}", "{w0 / (2 * math.pi) * 1.0001:.6g}"]\n'
        "min = 60\n")
    (r,) = _check_text(spec, SAMPLE).limits
    assert r.status is Status.PASS and r.measured > 60


def _check_text(text: str, sample: Path):
    """Check spec ``text`` from a folder beside ``sample`` (its netlist path kept valid)."""
    import tempfile
    with tempfile.TemporaryDirectory(dir=sample.parent) as d:
        p = Path(d) / "s.toml"
        p.write_text(text.replace('"../sample_netlists/', '"../../sample_netlists/'))
        return check_spec(str(p))


T_PAD = """Quillmere QM-ATT6 6 dB pad in a 50 ohm line
R1 in mid {ra}
R2 mid out {ra}
R3 mid 0 {rb}
"""


def test_a_matched_attenuator_reads_its_loss_and_no_reflection(tmp_path):
    # the T pad (common practice): K = 10^(6/20), series Z0(K−1)/(K+1), shunt 2Z0·K/(K²−1)
    k = 10 ** (6 / 20)
    ra, rb = 50 * (k - 1) / (k + 1), 2 * 50 * k / (k * k - 1)
    body = "".join(
        f'[[limits]]\nkind = "port"\nquantity = "{q}"\n{port}band = ["1meg", "10meg"]\n{b}\n'
        for q, port, b in [("transducer_gain", "", "min = -7\nmax = -5"),
                           ("insertion_loss", "", "min = 5\nmax = 7"),
                           ("impedance", 'port = "input"\n', "min = 40\nmax = 60"),
                           ("impedance", 'port = "output"\n', "min = 40\nmax = 60"),
                           ("return_loss", 'port = "input"\n', "min = 40")])
    spec = write(tmp_path, T_PAD.format(ra=ra, rb=rb), body,
                 '[ports]\ninput = { node = "in", ohms = "50" }\n'
                 'output = { node = "out", ohms = "50" }\n')
    result = check_spec(spec)
    assert result.error is None
    got = [r.measured for r in result.limits]
    # equal terminations: transducer gain and insertion loss are the pad's loss
    assert got[0] == pytest.approx(-6.0, abs=1e-9)
    assert got[1] == pytest.approx(6.0, abs=1e-9)
    assert got[2] == pytest.approx(50.0, rel=1e-9) and got[3] == pytest.approx(50.0, rel=1e-9)
    # a matched pad reflects nothing: the return loss is at the numbers' floor (> 200 dB)
    assert got[4] > 200


def test_an_unloaded_output_port_reads_the_network_alone(tmp_path):
    # no load: Z_out is 1/(jωC) ‖ (Rs + jωL) with the input terminated in Rs
    net = (ROOT / "sample_netlists" / "qm_rf10_match.cir").read_text("utf-8")
    spec = write(tmp_path, net, '[[limits]]\nkind = "port"\nquantity = "impedance"\n'
                 'port = "output"\nband = ["9meg", "11meg"]\nmax = "1k"\n',
                 '[ports]\nsubcircuit = "QM_RF10_MATCH"\n'
                 'input = { node = "ant", ohms = "50" }\noutput = { node = "rx", ohms = "open" }\n')
    (r,) = check_spec(spec).limits
    assert r.measured == pytest.approx(band_max(lambda f: np.abs(z_out(f)), 9e6, 11e6),
                                       rel=1e-6)


def test_monte_carlo_and_worst_case_follow_each_sample(tmp_path):
    # ±5 % on L and C: the worst Monte Carlo sample re-solved here from its values, and the
    # worst case no better than the worst of the four corners worked out here
    net = (ROOT / "sample_netlists" / "qm_rf10_match.cir").read_text("utf-8")
    ports = ('[ports]\nsubcircuit = "QM_RF10_MATCH"\ninput = { node = "ant", ohms = "50" }\n'
             'output = { node = "rx", ohms = "200" }\n')
    limit = ('[[limits]]\nkind = "port"\nquantity = "return_loss"\nport = "input"\n'
             'band = ["9.5meg", "10.5meg"]\nmin = 15\n'
             '[tolerances]\ndefault = { L = "5%", C = "5%" }\n')
    spec = write(tmp_path, net, limit + '[analysis]\nmode = ["nominal", "worst_case", '
                 '"monte_carlo"]\nsamples = 200\nseed = 4\n', ports)
    out = tmp_path / "r.json"
    from netcheck.cli import main
    assert main(["check", spec, "--jobs", "1", "--json", str(out)]) in (0, 1)
    doc = json.loads(out.read_text("utf-8"))["specs"][0]
    mc = doc["tolerance"]["monte_carlo"]["limits"][0]
    v = mc["worst_values"]
    worst = band_max(lambda f: np.abs(gamma(z_in(f, v["XQM_RF10_MATCH.L1"],
                                                 v["XQM_RF10_MATCH.C1"]), RS)))
    assert mc["worst_measured"] == pytest.approx(-20 * math.log10(worst), abs=1e-5)
    corners = [band_max(lambda f: np.abs(gamma(z_in(f, L1 * a, C1 * b), RS)))
               for a in (0.95, 1.05) for b in (0.95, 1.05)]
    wc = next(r for r in doc["limits"] if r["name"].startswith("worst case"))
    assert wc["measured"] <= -20 * math.log10(max(corners)) + 1e-6


def test_the_terminations_are_not_parts():
    spec = parse_spec('netlist = "n.cir"\n[ports]\ninput = { node = "a", ohms = 50 }\n'
                      'output = { node = "b", ohms = 50 }\n[sweep]\nstart = "1k"\n'
                      'stop = "1meg"\n', str(ROOT / "specs" / "x.toml"))
    assert spec.source == "VNC_PORT_IN" and spec.output == ("b", "0")
    from netcheck.netlist.ports import with_ports
    from netcheck.netlist.parse import load_netlist
    from netcheck.netlist.elaborate import elaborate
    parsed = with_ports(load_netlist("Quillmere QM-P1\nR1 a b 100\nR2 b 0 1k\n"),
                        spec.ports, "x.toml")
    circuit = elaborate(parsed)
    assert {e.name for e in circuit.elements} >= PORT_ELEMENTS
    parts = toleranced_parts(Tolerances(default=(("R", 0.01),)), circuit)
    assert sorted(p[0] for p in parts) == ["R1", "R2"]


@pytest.mark.parametrize("text, where, words", [
    ('source = "V1"\n[ports]\ninput = { node = "a", ohms = 50 }\noutput = { node = "b" }',
     "source", "not with [ports]"),
    ('[ports]\ninput = { node = "a", ohms = 0 }\noutput = { node = "b" }',
     "ports.input.ohms", ""),
    ('[ports]\ninput = { node = "a 0 1k", ohms = 50 }\noutput = { node = "b" }',
     "ports.input.node", "no spaces"),
    ('[ports]\ninput = { node = "a", ohms = 50 }\noutput = { node = "a" }',
     "ports.output", "the input node"),
    ('[ports]\ninput = { node = "a", ohms = 50 }\noutput = { node = "0" }',
     "ports.output.node", "ground"),
    ('[ports]\ninput = { node = "a", ohms = 50 }\noutput = { node = "b" }\n[[limits]]\n'
     'kind = "port"\nquantity = "transducer_gain"\nband = ["1k", "2k"]\nmin = -1',
     "limits[0].quantity", "needs a load"),
    ('source = "V1"\noutput = "b"\n[[limits]]\nkind = "port"\nquantity = "vswr"\n'
     'port = "input"\nband = ["1k", "2k"]\nmax = 2', "limits[0].kind", "[ports]"),
    ('[ports]\ninput = { node = "a", ohms = 50 }\noutput = { node = "b", ohms = 50 }\n'
     '[analysis]\nmode = ["monte_carlo"]\n[[limits]]\nkind = "port"\nquantity = "vswr"\n'
     'port = "output"\nband = ["1k", "2k"]\nmax = 2', "limits[0].port", "Monte Carlo"),
    ('[ports]\ninput = { node = "a", ohms = 50 }\noutput = { node = "b", ohms = 50 }\n'
     '[[limits]]\nkind = "port"\nquantity = "transducer_gain"\nport = "input"\n'
     'band = ["1k", "2k"]\nmin = -1', "limits[0].port", "two-port"),
])
def test_bad_ports_are_refused_at_their_key(text, where, words):
    head, _, rest = text.partition("[")
    full = f'netlist = "n.cir"\n{head}[sweep]\nstart = "1k"\nstop = "1meg"\n[{rest}'
    with pytest.raises(SpecError) as info:
        parse_spec(full, "s.toml")
    assert info.value.where == where and words in info.value.message


@pytest.mark.parametrize("ports, line, words", [
    ('subcircuit = "NOPE"\n', 4, "defines no subcircuit 'NOPE' (defined: QM_RF10_MATCH)"),
    ('subcircuit = "QM_RF10_MATCH"\npins = ["ant"]\n', 5, "which has 2 pins (ant rx)"),
])
def test_a_subcircuit_the_netlist_lacks_is_named(tmp_path, ports, line, words):
    net = (ROOT / "sample_netlists" / "qm_rf10_match.cir").read_text("utf-8")
    spec = write(tmp_path, net, "", f'[ports]\n{ports}input = {{ node = "ant", ohms = "50" }}\n'
                 'output = { node = "rx", ohms = "200" }\n')
    result = check_spec(spec)
    # at the key's line in the spec, which the message quotes
    assert f"s.toml:{line}:1: error spec-203: " in result.error and words in result.error


def test_a_netlist_using_a_port_name_is_refused(tmp_path):
    spec = write(tmp_path, "Quillmere QM-P2\nRNC_PORT_IN a b 1k\nR2 b 0 1k\n", "",
                 '[ports]\ninput = { node = "a", ohms = "50" }\n'
                 'output = { node = "b", ohms = "50" }\n')
    result = check_spec(spec)
    assert result.error is not None and "named RNC_PORT_IN" in result.error
