"""The ``noise`` limit kind against closed forms (Johnson 1928, Nyquist 1928: 4kTR; the
kT/C result, its finite-band form (2kT/πC)·[atan(2πfRC)] worked by hand; a matched
attenuator's noise figure equal to its loss, Friis 1944, from memory). k is the exact SI
2019 value; 27 °C = 300.15 K.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from circuits import refused_at
from netcheck.analyses.nominal import check_spec

K_B, T = 1.380649e-23, 300.15
R, C = 10e3, 1e-9
RC = f"Quillmere QM-N8 RC anti-alias section\nV1 in 0 AC 1\nR1 in out {R:g}\nC1 out 0 {C:g}\n"


def write(tmp_path: Path, body: str, netlist: str = RC, head: str = 'source = "V1"\n'
          'output = "out"\n') -> str:
    (tmp_path / "n.cir").write_text(netlist)
    spec = tmp_path / "s.toml"
    spec.write_text(f'title = "noise"\nnetlist = "n.cir"\n{head}[sweep]\nstart = "10"\n'
                    f'stop = "10meg"\n{body}')
    return str(spec)


def limit(quantity: str, band: tuple[str, str], rest: str) -> str:
    return (f'[[limits]]\nkind = "noise"\nquantity = "{quantity}"\n'
            f'band = ["{band[0]}", "{band[1]}"]\n{rest}\n')


def kt_c_rms(lo: float, hi: float, c: float = C, r: float = R) -> float:
    x = lambda f: math.atan(2 * math.pi * f * r * c)  # noqa: E731
    return math.sqrt(2 * K_B * T / (math.pi * c) * (x(hi) - x(lo)))


def test_density_rms_and_snr_of_an_rc_low_pass(tmp_path):
    body = (limit("output_density", ("10", "1k"), 'max = "20n"')
            + limit("rms", ("10", "10meg"), 'max = "5u"')
            + limit("snr", ("10", "100k"), 'signal_rms = 0.5\nsignal_hz = "1k"\nmin = 100'))
    result = check_spec(write(tmp_path, body))
    assert result.error is None
    dens, rms, snr = result.limits
    # the density is highest at the bottom of the band: √(4kTR/(1 + x²)), x = 2πfRC
    x = 2 * math.pi * 10 * R * C
    assert dens.measured == pytest.approx(math.sqrt(4 * K_B * T * R / (1 + x * x)), rel=1e-9)
    assert dens.at_hz == pytest.approx(10.0)
    assert rms.measured == pytest.approx(kt_c_rms(10, 10e6), rel=1e-8)
    h = abs(1 / (1 + 2j * math.pi * 1e3 * R * C))
    assert snr.measured == pytest.approx(20 * math.log10(0.5 * h / kt_c_rms(10, 100e3)),
                                         abs=1e-7)


def test_the_json_ranks_the_sources(tmp_path):
    # a divider: R1 ‖ R2 seen by the output; each resistor's share is its conductance's
    # share, G_k/(G1 + G2) (the Thevenin noise of the divider, common practice)
    net = "Quillmere QM-N9 divider\nV1 in 0 AC 1\nR1 in out 1k\nR2 out 0 3k\n"
    spec = write(tmp_path, limit("output_density", ("10", "1k"), 'max = "10n"'), net)
    from netcheck.cli import main
    out = tmp_path / "r.json"
    assert main(["check", spec, "--jobs", "1", "--json", str(out)]) == 0
    block = json.loads(out.read_text("utf-8"))["specs"][0]["noise"][0]
    parts = [(s["part"], s["share_pct"]) for s in block["sources"]]
    assert parts[0][0] == "R1" and parts[0][1] == pytest.approx(75.0, rel=1e-9)
    assert parts[1][0] == "R2" and parts[1][1] == pytest.approx(25.0, rel=1e-9)
    # over a band (an rms limit) the same shares, each source's RMS its density (the
    # divider's noise is white) times √(bandwidth): √(4kT/R_k)·R∥ ·√(1k − 10)
    spec = write(tmp_path, limit("rms", ("10", "1k"), 'max = "1u"'), net)
    assert main(["check", spec, "--jobs", "1", "--json", str(out)]) == 0
    block = json.loads(out.read_text("utf-8"))["specs"][0]["noise"][0]
    assert block["band_hz"] == [10.0, 1000.0] and block["at_hz"] is None
    first = block["sources"][0]
    assert first["part"] == "R1" and first["share_pct"] == pytest.approx(75.0, rel=1e-7)
    rpar = 1e3 * 3e3 / 4e3
    assert first["rms"] == pytest.approx(math.sqrt(4 * K_B * T / 1e3) * rpar
                                         * math.sqrt(990.0), rel=1e-7)


def test_noise_figure_of_a_matched_pad_is_its_loss(tmp_path):
    # a 6 dB T pad between [ports] of 50 Ω: the figure, with the load not counted, is
    # 6.0 dB at every frequency (Friis; at T = T0)
    k = 10 ** (6 / 20)
    ra, rb = 50 * (k - 1) / (k + 1), 2 * 50 * k / (k * k - 1)
    net = f"Quillmere QM-N10 pad\nRA in mid {ra}\nRB mid out {ra}\nRC mid 0 {rb}\n"
    ports = ('[ports]\ninput = { node = "in", ohms = "50" }\n'
             'output = { node = "out", ohms = "50" }\n')
    result = check_spec(write(tmp_path, limit("noise_figure", ("1k", "1meg"), "max = 6.5"),
                              net, ports))
    (nf,) = result.limits
    assert nf.measured == pytest.approx(6.0, abs=1e-9)
    # the same as a noise temperature: T0·(F − 1), T0 = 290 K (IEEE definition)
    (te,) = check_spec(write(tmp_path, limit("noise_temperature", ("1k", "1meg"),
                                             "max = 1000"), net, ports)).limits
    assert te.measured == pytest.approx(290.0 * (10 ** 0.6 - 1), rel=1e-9)


def test_worst_case_of_the_rms_follows_kt_over_c(tmp_path):
    # over the whole sweep the RMS noise is close to √(kT/C): C at −10 % is the worst,
    # whatever R does (the worst case takes central differences of the measured value)
    body = (limit("rms", ("10", "10meg"), 'max = "5u"')
            + '[tolerances]\ndefault = { R = "5%", C = "10%" }\n'
              '[analysis]\nmode = ["nominal", "worst_case"]\n')
    result = check_spec(write(tmp_path, body))
    worst = next(r for r in result.limits if r.name.startswith("worst case"))
    corners = [kt_c_rms(10, 10e6, C * b, R * a) for a in (0.95, 1.05) for b in (0.9, 1.1)]
    assert worst.measured == pytest.approx(max(corners), rel=1e-6)


def test_monte_carlo_judges_each_sample_own_noise(tmp_path):
    # the RMS noise of each sample is the finite-band kT/C form at its own R and C: the
    # worst sample, re-solved here from its values
    body = (limit("rms", ("10", "10meg"), 'max = "5u"')
            + '[tolerances]\ndefault = { R = "5%", C = "10%" }\n'
              '[analysis]\nmode = ["nominal", "monte_carlo"]\nsamples = 50\nseed = 3\n')
    spec = write(tmp_path, body)
    out = tmp_path / "r.json"
    from netcheck.cli import main
    assert main(["check", spec, "--jobs", "1", "--json", str(out)]) == 0
    mc = json.loads(out.read_text("utf-8"))["specs"][0]["tolerance"]["monte_carlo"]
    worst = mc["limits"][0]
    v = worst["worst_values"]
    assert worst["worst_measured"] == pytest.approx(
        kt_c_rms(10, 10e6, v["C1"], v["R1"]), rel=1e-8)


@pytest.mark.parametrize("rest, where, words", [
    ('quantity = "snr"\nband = ["10", "1k"]\nmin = 10', "limits[0].signal_rms",
     "required for snr"),
    ('quantity = "rms"\nband = ["10", "1k"]\nmax = 1\nsignal_rms = 1',
     "limits[0].signal_rms", "only an snr"),
    ('quantity = "rms"\nband = ["10", "1k"]\nmax = 1\nsource_resistor = "R1"',
     "limits[0].source_resistor", "only a noise_figure"),
    ('quantity = "rms"\nband = ["10", "1k"]', "limits[0]", "min, max or both"),
    ('quantity = "rms"\nband = ["10", "1k"]\nmax = 1\ntemperature_c = -300',
     "limits[0].temperature_c", "absolute zero"),
])
def test_bad_noise_limits_are_refused_at_their_key(rest, where, words):
    text = ('netlist = "n.cir"\nsource = "V1"\noutput = "out"\n[sweep]\nstart = "10"\n'
            f'stop = "10meg"\n[[limits]]\nkind = "noise"\n{rest}\n')
    refused_at(text, where, words)


def test_a_noise_figure_needs_its_source_resistance(tmp_path):
    (r,) = check_spec(write(tmp_path, limit("noise_figure", ("10", "1k"), "max = 3"))).limits
    assert r.status.value == "error" and "source_resistor" in r.message
    (r,) = check_spec(write(tmp_path, limit("noise_figure", ("10", "1k"),
                                            'max = 3\nsource_resistor = "R9"'))).limits
    assert r.status.value == "error" and "R9 is not a resistor" in r.message


def test_each_named_output_ranks_its_own_sources(tmp_path):
    # the sources of a noise limit on a named output are that output's: their RMS values
    # add in power to the row's RMS (uncorrelated sources), output by output
    root = Path(__file__).resolve().parents[2]
    net = (root / "sample_netlists" / "qm_sv1_split.cir").read_text("utf-8")
    body = (limit("rms", ("10", "100k"), 'output = "band"\nmax = "1m"')
            + limit("rms", ("10", "100k"), 'name = "low noise"\noutput = "low"\nmax = "1m"'))
    spec = write(tmp_path, body, net, 'source = "VIN"\n[outputs]\nlow = "lp"\nband = "bp"\n')
    out = tmp_path / "r.json"
    from netcheck.cli import main
    assert main(["check", spec, "--jobs", "1", "--json", str(out)]) == 0
    doc = json.loads(out.read_text("utf-8"))["specs"][0]
    rows = {r["name"]: r["measured"] for r in doc["limits"]}
    for entry in doc["noise"]:
        total = math.sqrt(sum(s["rms"] ** 2 for s in entry["sources"]))
        assert total == pytest.approx(rows[entry["limit"]], rel=1e-6)
    assert rows["low noise"] != pytest.approx(rows[doc["noise"][0]["limit"]], rel=1e-3)


def test_the_report_draws_the_noise_density(tmp_path):
    # the block's curve is the RC's √(4kTR/(1 + x²)) on 200 points over the sweep, and
    # the PDF has the figure
    import numpy as np

    from netcheck.report.plot_response import spec_figures

    spec = write(tmp_path, limit("output_density", ("10", "1k"), 'max = "20n"'))
    result = check_spec(spec)
    entry = result.extra_value("noise")[0]
    f, d = np.array(entry["curve"]["f_hz"]), np.array(entry["curve"]["density"])
    x = 2 * np.pi * f * R * C
    np.testing.assert_allclose(d, np.sqrt(4 * K_B * T * R / (1 + x * x)), rtol=1e-9)
    assert f.size == 200 and entry["bounds"] == [None, 20e-9]
    assert "Output noise density" in [title for title, _ in spec_figures(result)]


@pytest.mark.parametrize("amp", ["E1 out 0 OPAMP p m", "E1 out 0 p m 1e9"])
def test_a_non_inverting_stage_against_the_noise_gain_expression(tmp_path, amp):
    # gain G = 1 + R2/R1; referred to the + input the densities add in power (common
    # practice; the op-amp noise model of Motchenbacher & Connelly, *Low-Noise Electronic
    # System Design*, 1993, from memory):
    #   S_out = G²·[en²(1 + fc/f) + in²(1 + fc/f)·(Rs² + (R1∥R2)²) + 4kT·(Rs + R1∥R2)]
    # (an E card of gain 1e9 reads as the ideal op-amp to about 1e-8)
    rs, r1, r2, en, in_, fc = 1e3, 1e3, 9e3, 8e-9, 2e-12, 100.0
    net = (f"Quillmere QM-N12 non-inverting stage\nV1 e 0 AC 1\nRS e p {rs}\n"
           f"{amp} en={en} in={in_} noise_corner={fc}\nR1 m 0 {r1}\nR2 out m {r2}\n")
    body = limit("output_density", ("10", "1k"), 'max = "1u"')
    (r,) = check_spec(write(tmp_path, body, net)).limits
    g, rp = 1 + r2 / r1, r1 * r2 / (r1 + r2)

    def s_out(f):
        k = 1 + fc / f
        return g * g * (en * en * k + in_ * in_ * k * (rs * rs + rp * rp)
                        + 4 * K_B * T * (rs + rp))

    # the density is highest at the bottom of the band, where the 1/f part is largest
    assert r.at_hz == pytest.approx(10.0)
    assert r.measured == pytest.approx(math.sqrt(s_out(10.0)), rel=1e-7)


def test_a_negative_noise_density_on_a_card_is_refused_at_its_place():
    from netcheck.api import read_netlist
    from netcheck.exceptions import NetcheckError

    with pytest.raises(NetcheckError) as info:
        read_netlist("Quillmere QM-N13\nV1 p 0 AC 1\nE1 out 0 OPAMP p out en=-1n\n")
    assert info.value.code == "netlist-105" and "en=-1e-09" in info.value.message
    assert (info.value.span.line, info.value.span.column) == (3, 22)  # at en=


def test_the_load_left_out_cannot_be_the_source():
    refused_at('netlist = "n.cir"\nsource = "V1"\noutput = "out"\n[sweep]\nstart = "10"\n'
               'stop = "10meg"\n[[limits]]\nkind = "noise"\nquantity = "noise_figure"\n'
               'band = ["10", "1k"]\nmax = 3\nsource_resistor = "R1"\nload_resistor = "r1"\n',
               "limits[0].load_resistor", "cannot be the source")
