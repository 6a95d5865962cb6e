"""The netlist dialect: constructs of real netlists read, ignored with a note, or refused.

Every netlist here is our own (Quillmere Instruments sample designs). Responses are
checked against closed forms written in the test:

* RC low-pass: |H| = 1/√(1 + (ωRC)²) (common practice, no source);
* resistive divider: H = R2/(R1 + R2) (Ohm's law);
* series RLC, output across R: H = R/(R + jωL + 1/(jωC)) (common practice, no source).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from netcheck import read_netlist
from netcheck.exceptions import ElaborationError, NetcheckError, NetlistSyntaxError
from netcheck.netlist.parse import Assign, load_netlist

F = np.array([100.0, 1e3, 1591.5494, 1e4, 1e5])


def rc_lowpass_db(f, r, c):
    """|H| of an RC low-pass in dB: 1/sqrt(1 + (2 pi f R C)^2) (common practice)."""
    return 20 * np.log10(1 / np.sqrt(1 + (2 * np.pi * f * r * c) ** 2))


def codes(nl) -> list[str]:
    return [d.code for d in nl.diagnostics]


CLEAN_RC = """Quillmere QM-7 anti-alias RC
V1 in 0 AC 1
R1 in out 1k
C1 out 0 100n
"""

NOISY_RC = """Quillmere QM-7 anti-alias RC, bench copy
.options reltol=1e-4 savecurrents
.tran 1u 10m
V1 in 0 PULSE(0 1 0 1u 1u 5m 10m) AC 1 ; pulse for the scope, AC for the plot
R1 in out 1k   $ carbon film
// the corner is at 1.59 kHz
C1 out 0 100n  // C0G
.print tran v(out) i(R1)
.plot ac vdb(out)
.probe V(alias(*))
.save @r1[i]
.meas ac fc WHEN vdb(out)=-3
;.four 1k v(out)
.ic v(out)=0
.control
run
plot vdb(out)
R9 out 0 1
.endc
.end
R8 out 0 1
"""


class TestIgnoredCards:
    def test_noisy_netlist_gives_the_clean_response_and_the_closed_form(self):
        clean = read_netlist(CLEAN_RC).ac("V1", "out", freqs=F).magnitude_db
        noisy = read_netlist(NOISY_RC).ac("V1", "out", freqs=F).magnitude_db
        np.testing.assert_allclose(noisy, clean, rtol=0, atol=1e-12)
        np.testing.assert_allclose(noisy, rc_lowpass_db(F, 1e3, 100e-9), rtol=0, atol=1e-9)

    def test_one_note_per_kind_naming_what_was_ignored(self):
        nl = load_netlist(NOISY_RC)
        got = {d.message.split(" ")[0]: d for d in nl.diagnostics if d.code == "netlist-155"}
        assert set(got) == {".options", ".tran", ".print", ".plot", ".probe", ".save", ".meas",
                            ".ic", ".control"}
        assert got[".tran"].span.line == 3
        # the control block's R9 and the card after .end are not part of the circuit
        assert [c.name.text for c in nl.top.cards] == ["V1", "R1", "C1"]
        [fn] = [d for d in nl.diagnostics if d.code == "netlist-156"]
        assert "PULSE" in fn.message and fn.span.line == 4

    def test_many_cards_of_one_kind_are_one_note_with_a_count(self):
        nl = load_netlist("Quillmere QM-7\nV1 in 0 AC 1\nR1 in 0 1k\n.print ac v(in)\n"
                          ".print ac vp(in)\n.print ac vdb(in)\n")
        [note] = nl.diagnostics
        assert note.code == "netlist-155" and "(2 more in this file)" in note.message

    def test_unknown_directive_still_warns(self):
        nl = load_netlist("Quillmere QM-7\nV1 in 0 AC 1\nR1 in 0 1k\n.qmwidget v(in) 3\n")
        assert codes(nl) == ["netlist-150"]

    def test_ac_command_of_a_control_block_is_the_sweep_when_there_is_no_ac_card(self):
        nl = load_netlist("Quillmere QM-7\nV1 in 0 AC 1\nR1 in 0 1k\n.control\n"
                          "ac dec 25 10 100k\n.endc\n")
        assert (nl.ac.kind, nl.ac.points, nl.ac.start, nl.ac.stop) == ("dec", 25, 10.0, 1e5)

    def test_an_ac_card_wins_over_the_control_block_command(self):
        nl = load_netlist("Quillmere QM-7\nV1 in 0 AC 1\nR1 in 0 1k\n.control\n"
                          "ac dec 25 10 100k\n.endc\n.ac oct 5 1k 4k\n")
        assert (nl.ac.kind, nl.ac.in_control) == ("oct", False)
        assert not any(".ac" in d.message for d in nl.diagnostics)


class TestComments:
    def test_dollar_and_slashes_comment_only_after_white_space(self):
        nl = load_netlist("Quillmere QM-7 $ rev B\nV1 in 0 AC 1 $ drive\n"
                          "R1 in out {1k} // film\nC1 out 0 {100n}$x\n")
        assert nl.title == "Quillmere QM-7"
        r1, c1 = nl.top.cards[1], nl.top.cards[2]
        assert [f.text for f in r1.fields] == ["in", "out", "{1k}"]
        # '$' straight after a value is not a comment: it stays a field (and is refused
        # as an extra field later), the card is not cut
        assert [f.text for f in c1.fields] == ["out", "0", "{100n}", "$x"]

    def test_a_control_block_without_endc_runs_to_the_end_with_a_note(self):
        nl = load_netlist("Quillmere QM-7\nV1 in 0 AC 1\nR1 in 0 1k\n.control\nR2 in 0 1\n")
        assert [c.name.text for c in nl.top.cards] == ["V1", "R1"]
        assert any("no .endc" in d.message for d in nl.diagnostics)


class TestSourceCards:
    @pytest.mark.parametrize("fields, dc, ac, phase", [
        ("dc 0 ac 1", 0.0, 1.0, 0.0),
        ("AC 1 0", 0.0, 1.0, 0.0),
        ("AC 2 45 DC 5", 5.0, 2.0, 45.0),
        ("dc=3 ac=2", 3.0, 2.0, 0.0),
        ("0 ac 1.0 sin(0 10m 1k)", 0.0, 1.0, 0.0),
        ("SINE(0 10m 10k) AC 1", 0.0, 1.0, 0.0),
        ("sin 0 1 1k ac 0.5", 0.0, 0.5, 0.0),
        ("DC(15)", 15.0, 0.0, 0.0),
        ("pwl(0 0\n+ 1n 1) AC 1", 0.0, 1.0, 0.0),
        ("PULSE 0 3 1m 1m 1m 8m 20m", 0.0, 0.0, 0.0),
        ("12Vdc AC 1Vac", 12.0, 1.0, 0.0),
    ])
    def test_fields_in_any_order_functions_ignored(self, fields, dc, ac, phase):
        ckt = read_netlist(f"Quillmere QM-7 source\nV1 in 0 {fields}\nR1 in 0 1k\n")
        src = ckt.element("V1")
        assert (src.dc, src.ac_magnitude, src.ac_phase_deg) == (dc, ac, phase)

    def test_a_current_source_with_a_function_drives_the_rl_load(self):
        # |Z| of R + jωL at 1 kHz: sqrt(100² + (2π·1k·10m)²) (Ohm's law)
        ckt = read_netlist("Quillmere QM-7 coil drive\nIin 0 1 SIN(0 1m 1k) AC 1\n"
                           "R1 1 2 100\nL1 2 0 10m\n")
        got = ckt.ac("Iin", "1", freqs=np.array([1e3])).magnitude_db[0]
        want = 20 * math.log10(math.hypot(100, 2 * math.pi * 1e3 * 10e-3))
        assert got == pytest.approx(want, abs=1e-9)

    def test_an_option_after_the_ac_part_is_left_to_the_options_reader(self):
        # Rser= belongs to the instance options: the AC part is read and the series
        # resistance is a real part. Reference: the divider 1k / (1k + 50), by hand.
        circuit = read_netlist("Quillmere QM-7\nV1 in 0 AC 1 Rser=50\nR1 in 0 1k\n")
        h = circuit.ac("V1", "in", freqs=[1e3]).transfer[0]
        assert abs(h - 1000.0 / 1050.0) < 1e-12

    @pytest.mark.parametrize("card, match", [
        ("V1 in 0 PULSE(0 1 AC 1", "has no closing"),
        ("V1 in 0 AC 1 (2)", "unexpected '\\('"),
    ])
    def test_broken_parentheses_on_a_source_are_syntax_errors(self, card, match):
        with pytest.raises(NetlistSyntaxError, match=match) as info:
            load_netlist(f"Quillmere QM-7\n{card}\nR1 in 0 1k\n")
        assert info.value.code == "netlist-100" and info.value.span.line == 2

    def test_a_second_bare_value_says_how_to_write_the_ac_part(self):
        with pytest.raises(ElaborationError, match="AC mag"):
            read_netlist("Quillmere QM-7\nV1 in 0 1 0 0\nR1 in 0 1k\n")


class TestParams:
    def test_unbraced_params_several_per_line_continued_and_func(self):
        text = ("Quillmere QM-12 tone filter\n"
                ".param R=1k RQ=R*1 RH = R/1\n"
                ".param Ctot = {C*1}\n"
                "+ C = 100n\n"
                ".func half(x) {x/2}\n"
                ".func twice(x) = 2*x\n"
                "V1 in 0 AC 1\n"
                "R1 in out {twice(half(RQ))}\n"
                "C1 out 0 Ctot\n")
        got = read_netlist(text).ac("V1", "out", freqs=F).magnitude_db
        np.testing.assert_allclose(got, rc_lowpass_db(F, 1e3, 100e-9), atol=1e-9)

    def test_unbraced_corner_expression(self):
        # fc = 1/(2 pi R C) with R = 1k: C chosen from it, so |H(fc)| = -3.0103 dB
        text = ("Quillmere QM-12\n.param fc = 2*pi*1k\n.param C = 1/(fc*1k)\n"
                "V1 in 0 AC 1\nR1 in out 1k\nC1 out 0 {C}\n")
        got = read_netlist(text).ac("V1", "out", freqs=np.array([1e3])).magnitude_db[0]
        assert got == pytest.approx(-10 * math.log10(2), abs=1e-9)

    def test_a_param_without_value_is_refused_by_name(self):
        with pytest.raises(NetlistSyntaxError, match="'Rload' has no value") as info:
            load_netlist("Quillmere QM-12\n.param Rload\nV1 in 0 AC 1\nR1 in 0 1k\n")
        assert info.value.span.line == 2

    @pytest.mark.parametrize("line, match", [
        (".param =3", "needs a name before it"),
        (".param a=", "needs a value after it"),
        (".func twice", "written .func name"),
    ])
    def test_malformed_param_and_func_cards(self, line, match):
        with pytest.raises(NetlistSyntaxError, match=match) as info:
            load_netlist(f"Quillmere QM-12\n{line}\nV1 in 0 AC 1\n")
        assert info.value.code == "netlist-101" and info.value.span.line == 2

    def test_a_product_outside_braces_on_a_card_says_so(self):
        with pytest.raises(NetlistSyntaxError, match="is a product"):
            load_netlist("Quillmere QM-12\nV1 in 0 AC 1\nR1 in 0 R*2\n")


class TestGlobal:
    SUB = ("Quillmere QM-3 bias divider\n.subckt leg a\nR1 a vmid 1k\n.ends\n"
           "V1 in 0 AC 1\nR0 in top 1k\nX1 top leg\nR2 vmid 0 1k\n")

    def test_global_node_joins_the_subcircuit_to_the_top_level(self):
        # in -1k- top -1k(X1.R1)- vmid -1k- 0: H(top) = 2k/3k (divider)
        got = read_netlist(self.SUB + ".global vmid\n").ac(
            "V1", "top", freqs=np.array([1e3])).magnitude_db[0]
        assert got == pytest.approx(20 * math.log10(2 / 3), abs=1e-12)

    def test_without_global_the_node_is_local(self):
        # X1's vmid is its own node: both legs dangle, no current flows, H(top) = 1
        ckt = read_netlist(self.SUB)
        assert "x1.vmid" in ckt.nodes
        got = ckt.ac("V1", "top", freqs=np.array([1e3])).magnitude_db[0]
        assert got == pytest.approx(0.0, abs=1e-12)


class TestIncludes:
    def write(self, tmp_path, name, text, encoding="utf-8"):
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(text.encode(encoding))
        return path

    def divider(self, top_text, tmp_path):
        top = self.write(tmp_path, "top.cir", top_text)
        return read_netlist(str(top)).ac("V1", "out", freqs=np.array([1e3])).magnitude_db[0]

    def test_inc_is_include(self, tmp_path):
        self.write(tmp_path, "load.inc", "R2 out 0 3k\n")
        got = self.divider("Quillmere QM-5\n.inc load.inc\nV1 in 0 AC 1\nR1 in out 1k\n",
                           tmp_path)
        assert got == pytest.approx(20 * math.log10(3 / 4), abs=1e-12)  # R2/(R1+R2)

    def test_lib_section_reads_only_that_section(self, tmp_path):
        self.write(tmp_path, "parts.lib", "* Quillmere loads\n.lib typ\nR2 out 0 1k\n.endl typ\n"
                   ".lib heavy\nR2 out 0 3k\n.endl\n")
        got = self.divider("Quillmere QM-5\n.lib parts.lib heavy\nV1 in 0 AC 1\n"
                           "R1 in out 1k\n", tmp_path)
        assert got == pytest.approx(20 * math.log10(3 / 4), abs=1e-12)

    def test_lib_with_a_file_only_is_an_include(self, tmp_path):
        self.write(tmp_path, "Load.LIB", "R2 out 0 1k\n")
        got = self.divider("Quillmere QM-5\n.lib Load.LIB\nV1 in 0 AC 1\nR1 in out 1k\n",
                           tmp_path)
        assert got == pytest.approx(20 * math.log10(1 / 2), abs=1e-12)  # R2/(R1+R2)

    def test_missing_section_is_an_error_naming_the_sections(self, tmp_path):
        self.write(tmp_path, "parts.lib", ".lib typ\nR2 out 0 1k\n.endl\n")
        with pytest.raises(NetlistSyntaxError, match="no section 'fast'.*typ"):
            self.divider("Quillmere QM-5\n.lib parts.lib fast\nV1 in 0 AC 1\n"
                         "R1 in out 1k\n", tmp_path)

    def test_windows_separators_and_case_resolve_with_a_warning(self, tmp_path):
        self.write(tmp_path, "lib/Load.inc", "R2 out 0 1k\n")
        top = self.write(tmp_path, "top.cir", "Quillmere QM-5\n.include lib\\LOAD.inc\n"
                         "V1 in 0 AC 1\nR1 in out 1k\n")
        nl = load_netlist(str(top))
        assert "netlist-159" in codes(nl)
        got = read_netlist(str(top)).ac("V1", "out", freqs=np.array([1e3])).magnitude_db[0]
        assert got == pytest.approx(20 * math.log10(1 / 2), abs=1e-12)

    def test_a_windows_absolute_path_is_refused_as_absolute(self, tmp_path):
        with pytest.raises(NetlistSyntaxError, match="absolute include path") as info:
            self.divider("Quillmere QM-5\n.lib C:\\Program Files (x86)\\qm\\std.lib\n"
                         "V1 in 0 AC 1\nR1 in out 1k\n", tmp_path)
        assert info.value.code == "netlist-104" and info.value.span.line == 2

    def test_an_include_that_cannot_be_read_is_an_error(self, tmp_path):
        with pytest.raises(NetlistSyntaxError) as info:
            self.divider("Quillmere QM-5\n.inc load.inc\nV1 in 0 AC 1\nR1 in out 1k\n",
                         tmp_path)
        assert info.value.code == "netlist-104" and info.value.span.line == 2

    def test_latin1_micro_sign_is_micro_with_a_note(self, tmp_path):
        # series RLC across R at f0 = 1/(2 pi sqrt(LC)): H = 1 (0 dB)
        text = "Quillmere QM-9 tank \u2013 ok\nV1 in 0 AC 1\nL1 in a 18\u00b5H\nC1 a out 1n\nR1 out 0 50\n"
        top = self.write(tmp_path, "tank.cir", text.replace("\u2013", "-"), "latin-1")
        nl = load_netlist(str(top))
        assert codes(nl)[0] == "netlist-158"
        f0 = 1 / (2 * math.pi * math.sqrt(18e-6 * 1e-9))
        got = read_netlist(str(top)).ac("V1", "out", freqs=np.array([f0])).magnitude_db[0]
        assert got == pytest.approx(0.0, abs=1e-9)

    def test_greek_mu_is_micro(self):
        ckt = read_netlist("Quillmere QM-9\nV1 in 0 AC 1\nL1 in 0 18\u03bcH\n")
        assert ckt.element("L1").value == pytest.approx(18e-6, rel=1e-15)


class TestLibrarySections:
    """``.lib`` sections: a library selecting its own, cycles, and the note on sections
    nothing selects. The divider is checked against H = R2/(R1 + R2) (Ohm's law)."""

    #: a Quillmere load library whose top selects its own 'typ' section
    LIB = ("* Quillmere QM-5 loads\n.lib qm5.lib typ\n"
           ".lib typ\nR2 out 0 1k\n.endl typ\n.lib heavy\nR2 out 0 3k\n.endl heavy\n")
    TOP = "Quillmere QM-5 divider\n{line}\nV1 in 0 AC 1\nR1 in out 1k\n"

    def load(self, tmp_path, files, line=".include qm5.lib"):
        for name, text in files.items():
            (tmp_path / name).write_text(text)
        top = tmp_path / "qm5.cir"
        top.write_text(self.TOP.format(line=line))
        return str(top)

    def gain(self, top):
        return read_netlist(top).ac("V1", "out", freqs=np.array([1e3])).magnitude_db[0]

    def test_a_library_reads_the_section_it_selects_itself(self, tmp_path):
        top = self.load(tmp_path, {"qm5.lib": self.LIB})
        assert self.gain(top) == pytest.approx(20 * math.log10(1 / 2), abs=1e-12)
        nl = load_netlist(top)  # the section is read once: one R2, the file listed once
        assert [c.name.text for c in nl.top.cards] == ["R2", "V1", "R1"]
        assert [Path(s.path).name for s in nl.sources] == ["qm5.cir", "qm5.lib"]

    def test_a_library_selected_from_outside_skips_its_own_selection(self, tmp_path):
        # '.lib qm5.lib heavy' reads only the heavy section: the top's '.lib qm5.lib typ'
        # is outside it, so typ is not read as well (that would be a second R2)
        top = self.load(tmp_path, {"qm5.lib": self.LIB}, ".lib qm5.lib heavy")
        assert self.gain(top) == pytest.approx(20 * math.log10(3 / 4), abs=1e-12)

    def test_the_top_netlist_may_select_its_own_section(self, tmp_path):
        top = tmp_path / "qm5.cir"
        top.write_text("Quillmere QM-5 divider, corners in the file\n.lib qm5.cir heavy\n"
                       "V1 in 0 AC 1\nR1 in out 1k\n.lib typ\nR2 out 0 1k\n.endl\n"
                       ".lib heavy\nR2 out 0 3k\n.endl\n")
        assert self.gain(str(top)) == pytest.approx(20 * math.log10(3 / 4), abs=1e-12)
        assert len(load_netlist(str(top)).sources) == 1

    def test_a_section_may_select_another_section_of_its_file(self, tmp_path):
        lib = ("* Quillmere QM-5 loads\n.lib typ\n.lib qm5.lib common\nR2 out 0 {rl}\n"
               ".endl\n.lib common\n.param rl=3k\n.endl\n")
        top = self.load(tmp_path, {"qm5.lib": lib}, ".lib qm5.lib typ")
        assert self.gain(top) == pytest.approx(20 * math.log10(3 / 4), abs=1e-12)

    @pytest.mark.parametrize("inner, files, chain", [
        # the section selects itself
        (".lib qm5.lib typ", {}, "qm5.lib section typ -> qm5.lib section typ"),
        # through another file's section
        (".lib loads.lib x", {"loads.lib": ".lib x\n.lib qm5.lib typ\n.endl\n"},
         "qm5.lib section typ -> loads.lib section x -> qm5.lib section typ"),
        # the whole file again, which selects the section again
        (".include qm5.lib", {}, "qm5.lib -> qm5.lib section typ -> qm5.lib"),
    ])
    def test_a_section_that_comes_back_to_itself_is_a_cycle(self, tmp_path, inner, files,
                                                            chain):
        lib = ("* Quillmere QM-5 loads\n.lib qm5.lib typ\n"
               f".lib typ\nR2 out 0 1k\n{inner}\n.endl typ\n")
        top = self.load(tmp_path, {"qm5.lib": lib, **files})
        with pytest.raises(NetlistSyntaxError) as info:
            load_netlist(top)
        assert info.value.code == "netlist-104"
        assert info.value.message == f"include cycle: {chain}"

    def notes(self, top):
        return [d for d in load_netlist(top).diagnostics if d.code == "netlist-163"]

    def test_sections_nobody_selects_get_one_note_per_file(self, tmp_path):
        lib = ("* Quillmere QM-5 loads\n.lib typ\n.param rt=1k\n.endl\n"
               ".lib heavy\n.param rh=3k\n.endl\n")
        top = self.load(tmp_path, {"qm5.lib": lib}, ".include qm5.lib\n.include qm5.lib")
        (note,) = self.notes(top)
        assert note.severity == "note"
        assert note.message.startswith(".lib sections typ, heavy of qm5.lib not read")
        assert "'.lib qm5.lib SECTION'" in note.message
        assert (Path(note.span.path).name, note.span.line, note.span.column) == ("qm5.lib", 2, 6)
        # selecting one corner is the point of sections: nothing to say, for either
        assert self.notes(self.load(tmp_path, {}, ".lib qm5.lib heavy")) == []
        assert self.notes(self.load(tmp_path, {}, ".lib qm5.lib heavy\n.lib qm5.lib TYP")) == []

    def test_the_self_selecting_library_says_nothing(self, tmp_path):
        assert self.notes(self.load(tmp_path, {"qm5.lib": self.LIB})) == []

    def test_the_note_is_bounded(self, tmp_path):
        lib = "".join(f".lib corner{k}\n.param r{k}=1k\n.endl\n" for k in range(20))
        top = self.load(tmp_path, {"qm5.lib": lib}, ".include qm5.lib")
        (note,) = self.notes(top)
        shown = ", ".join(f"corner{k}" for k in range(7))
        assert f"sections {shown}, and 13 more of qm5.lib" in note.message
        assert "corner7" not in note.message

    def test_netlist_text_with_sections_is_told_too(self):
        nl = load_netlist("Quillmere QM-5\nV1 in 0 AC 1\nR1 in out 1k\nR2 out 0 1k\n"
                          ".lib spare\nR3 out 0 1k\n.endl\n")
        (note,) = [d for d in nl.diagnostics if d.code == "netlist-163"]
        assert note.message.startswith(".lib section spare of the netlist not read")
        assert [c.name.text for c in nl.top.cards] == ["V1", "R1", "R2"]


class TestTitleAndAc:
    def test_a_title_that_looks_like_a_card_is_named(self):
        nl = load_netlist("R1 in out 1k\nV1 in 0 AC 1\nR2 in 0 1k\n")
        assert codes(nl)[0] == "netlist-157" and nl.diagnostics[0].span.line == 1

    @pytest.mark.parametrize("card, want", [
        (".ac dec 20 10 100k", (10.0, 1e5, 20)),
        (".AC OCT 10 100 200", (100.0, 200.0, 34)),     # 10·log2(10) = 33.2 → 34
        (".ac lin 101 10 10k", (10.0, 1e4, 34)),        # 101 points over 3 decades
    ])
    def test_ac_card_recorded_as_a_log_grid(self, card, want):
        nl = load_netlist(f"Quillmere QM-7\nV1 in 0 AC 1\nR1 in 0 1k\n{card}\n")
        assert nl.ac.log_grid() == want and codes(nl) == []


class TestRefused:
    @pytest.mark.parametrize("card, what", [
        ("Z1 out in 0 qm_mesfet", "MESFET"),
        ("W1 out 0 vsense qm_csw", "current-controlled switch"),
        ("S1 out 0 in 0 qm_sw", "switch"),
    ])
    def test_devices_are_refused_by_name(self, card, what):
        with pytest.raises(ElaborationError, match=what) as info:
            read_netlist(f"Quillmere QM-7\nV1 in 0 AC 1\nR1 in out 1k\n{card}\n")
        assert info.value.code == "netlist-120" and info.value.span.line == 4

    @pytest.mark.parametrize("card, what, col", [
        ("F1 out 0 VS laplace=1/(1+s)", "LAPLACE", 13),  # LAPLACE is read on E and G only
        ("E2 out 0 TABLE {v(in)} = (0,0) (1,2)", "TABLE", 10),
        ("G2 out 0 FREQ {v(in)} (1k,0,0) (2k,-3,-45)", "FREQ", 10),
        ("F2 out 0 VALUE={i(V1)}", "VALUE", 10),  # VALUE is read on E and G cards only
        ("B2 out 0 Q={v(in)}", "behavioural source", 1),
        ("C1 out 0 #CTUNE#  $ #trim 2p..9p#", "placeholder", 10),
        ("L1 out 0 <L_woofer>", "placeholder", 10),
    ])
    def test_constructs_are_refused_by_name_at_their_place(self, card, what, col):
        with pytest.raises(NetlistSyntaxError, match=what) as info:
            load_netlist(f"Quillmere QM-7\nV1 in 0 AC 1\nR1 in out 1k\n{card}\n")
        assert info.value.code == "netlist-120"
        assert (info.value.span.line, info.value.span.column) == (4, col)

    @pytest.mark.parametrize("card, key, col", [("E1 out 0 VALUE=2*v(in)", "VALUE", 15),
                                                ("G1 out 0 value = 1m*v(in)", "value", 16),
                                                ("B1 out 0 V=V(in)*2", "V", 11)])
    def test_an_unbraced_expression_is_braced_in_place(self, card, key, col):
        # to the end of the line: the '=' becomes '{' and a '}' closes it, so every
        # column of the expression stays where it is in the file
        netlist = load_netlist(f"Quillmere QM-7\nV1 in 0 AC 1\nR1 in out 1k\n{card}\n")
        fields = netlist.top.cards[-1].fields
        assert fields[-2].text == key
        assert fields[-1].kind == "braced" and fields[-1].span.column == col
        assert fields[-1].text == "{" + card[col:] + "}"

    @pytest.mark.parametrize("card, key, col", [("E1 out 0 VALUE={2*v(in)}", "VALUE", 16),
                                                ("B1 out 0 V = {tanh(v(in, 0))}", "V", 14),
                                                ("B2 0 out I={1m*i(V1)}", "I", 12)])
    def test_behavioural_cards_reach_the_card_reader_whole_with_their_columns(self, card,
                                                                              key, col):
        netlist = load_netlist(f"Quillmere QM-7\nV1 in 0 AC 1\nR1 in out 1k\n{card}\n")
        fld = netlist.top.cards[-1].fields[-1]
        assert isinstance(fld, Assign) and fld.key.text == key
        assert fld.value.kind == "braced" and fld.value.text == card[col - 1:]
        assert (fld.value.span.line, fld.value.span.column) == (4, col)

    @pytest.mark.parametrize("card", [".if (fast == 1)", ".alter"])
    def test_directives_that_would_change_the_circuit_are_refused(self, card):
        with pytest.raises(NetlistSyntaxError, match="netcheck") as info:
            load_netlist(f"Quillmere QM-7\nV1 in 0 AC 1\n{card}\nR1 in 0 1k\n")
        assert info.value.code == "netlist-120" and info.value.span.line == 3

    def test_a_file_without_any_source_says_how_to_drive_it(self):
        ckt = read_netlist("Quillmere QM-19 crystal arm\nC1 a b 10f\nL1 b c 20m\nR1 c 0 20\n")
        with pytest.raises(ElaborationError, match="add a source card"):
            ckt.ac("V1", "c", freqs=np.array([1e6]))


def test_a_bench_file_full_of_dialect_solves_as_its_nodal_equations(tmp_path):
    """.lib section, unbraced .param, .func, .global, a PULSE source, a .control block and
    '$' comments together; checked against the two nodal equations solved with numpy:
    node a: (va - 1)/R1 + s C1 va + (va - vo)/R2 = 0;  node out: (vo - va)/R2 + s C2 vo = 0
    (Kirchhoff's current law, written here independently of netcheck)."""
    (tmp_path / "qm21.lib").write_text("* Quillmere QM-21 values\n.lib fast\n.param R1=100\n"
                                       ".endl fast\n.lib typ\n.param R1=1k\n+ R2 = 2*R1\n"
                                       ".endl typ\n")
    top = tmp_path / "qm21.cir"
    top.write_text("Quillmere QM-21 two-pole RC, bench file\n"
                   ".lib qm21.lib typ\n"
                   ".func par(a, b) {a*b/(a+b)}\n"
                   ".param C1=100n C2 = C1/2\n"
                   ".options method=gear\n"
                   "V1 in 0 DC 0 AC 1 PULSE(0 1 0 1u 1u 1m 2m)\n"
                   "R1 in a {R1}  $ first section\n"
                   "C1 a 0 C1\n"
                   "X1 a out stage\n"
                   "V0 gref 0 DC 0\n"
                   ".subckt stage p q\n"
                   "R2 p q {par(2*R2, 2*R2)}\n"
                   "C2 q gref {C2}\n"
                   ".ends stage\n"
                   ".global gref\n"
                   ".control\nrun\nplot vdb(out)\n.endc\n"
                   ".tran 1u 5m\n.end\n")
    got = read_netlist(str(top)).ac("V1", "out", freqs=F).transfer
    r1, r2, c1, c2 = 1e3, 2e3, 100e-9, 50e-9
    want = []
    for s in 2j * np.pi * F:
        a = np.array([[1 / r1 + s * c1 + 1 / r2, -1 / r2], [-1 / r2, 1 / r2 + s * c2]])
        want.append(np.linalg.solve(a, np.array([1 / r1, 0]))[1])
    np.testing.assert_allclose(got, np.array(want), rtol=1e-10)


class TestTemperature:
    """``.temp``: the parts' TC1/TC2 taken there (value·(1 + TC1·ΔT + TC2·ΔT²), the
    temperature-coefficient form of the SPICE convention, from memory); devices are
    solved there too."""

    BASE = ("Quillmere QM-48 warm divider\nV1 in 0 AC 1\nR1 in out 4.3k TC1=4m TC2=10u\n"
            "R2 out 0 1k\n")

    def test_tc_parts_take_their_value_at_the_temperature(self):
        c = read_netlist(self.BASE + ".temp 77 100\n.temp 20\n")
        dt = 77.0 - 27.0
        assert c.temp_c == 77.0
        assert c.element("R1").value == pytest.approx(4.3e3 * (1 + 4e-3 * dt + 10e-6 * dt ** 2),
                                                      rel=1e-15)
        assert c.element("R2").value == 1e3  # no coefficient, no change
        first, second = [d for d in c.diagnostics if d.code == "netlist-165"]
        assert first.severity == "note" and first.span.line == 5
        assert "100, are for a stepped run: ignored" in first.message
        assert second.span.line == 6 and "another .temp card ignored" in second.message

    def test_the_equals_form(self):
        c = read_netlist(self.BASE + ".temp = 27\n")
        assert (c.temp_c, c.element("R1").value) == (27.0, 4.3e3)
        c = read_netlist(self.BASE + ".TEMP = 127\n")
        assert c.element("R1").value == pytest.approx(4.3e3 * (1 + 0.4 + 0.1), rel=1e-15)

    def test_without_temp_the_nominal_values(self):
        c = read_netlist(self.BASE)
        assert (c.temp_c, c.element("R1").value) == (27.0, 4.3e3)

    @pytest.mark.parametrize("value, what", [("hot", "hot"), ("-300", "-300")])
    def test_a_temperature_that_is_not_one(self, value, what):
        with pytest.raises(NetlistSyntaxError, match=what) as info:
            read_netlist(self.BASE + f".temp {value}\n")
        assert info.value.code == "netlist-101" and info.value.span.line == 5

    def test_devices_follow_the_temperature(self):
        from netcheck.mna.bias import operating_point
        diode = ("Quillmere QM-49 bias diode\nVB b 0 DC 5\nR1 b a 4.3k\nD1 a 0 qm_d\n"
                 ".model qm_d D(IS=1e-14)\n")
        cold, warm = (operating_point(read_netlist(diode + t)) for t in ("", ".temp 85\n"))
        assert (cold.temp_c, warm.temp_c) == (27.0, 85.0)
        # the forward drop falls some 2 mV/K as it warms (common practice, no source);
        # tests/mna/test_device_temperature.py checks the scaling laws themselves
        drop = warm.voltage("a") - cold.voltage("a")
        assert -2.5e-3 * 58 < drop < -1.5e-3 * 58
