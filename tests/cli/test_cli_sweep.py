"""``netcheck sweep`` through netcheck.cli.main: CSV, JSON, grid, stimulus kinds, errors."""

from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path

import numpy as np
import pytest

from netcheck.cli import BAD_INPUT, OK, main
from netcheck.netlist.units import parse_quantity

HEADER = "frequency_hz,magnitude_db,phase_deg,group_delay_s"
BAD = Path(__file__).resolve().parents[1] / "bad_netlists"


def sweep(capsys, *args: str) -> tuple[int, str, str]:
    code = main(["sweep", *args])
    out, err = capsys.readouterr()
    return code, out, err


def rows(text: str) -> np.ndarray:
    reader = csv.reader(io.StringIO(text))
    assert next(reader) == HEADER.split(",")
    return np.array([[float(x) for x in row] for row in reader])


def rx40k_closed_form(f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """sample_netlists/rx40k.cir: V -> RS 1 -> L 2.2m -> C -> RSENSE 45 to ground.

    Series RLC, output across RSENSE (textbook closed form):
      H = Rs/(Rt + jX), Rt = 46, X = wL - 1/(wC), C = 1/((2 pi 40k)^2 L)
      tau = (L + 1/(w^2 C)) / Rt / (1 + (X/Rt)^2)   (derivative of atan, by hand)
    """
    l, rt = 2.2e-3, 46.0
    c = 1 / ((2 * math.pi * 40e3) ** 2 * l)
    w = 2 * math.pi * f
    x = w * l - 1 / (w * c)
    h = 45.0 / (rt + 1j * x)
    tau = (l + 1 / (w * w * c)) / rt / (1 + (x / rt) ** 2)
    return h, tau


class TestCsv:
    def test_csv_to_stdout(self, capsys, samples):
        code, out, err = sweep(capsys, str(samples / "rx40k.cir"), "--source", "VIN",
                               "--node", "out", "--start", "1k", "--stop", "1meg",
                               "--ppd", "10", "--csv", "-")
        assert code == OK and err == ""
        assert out.split("\n")[0] == HEADER
        data = rows(out)
        f = data[:, 0]
        # 3 decades at 10 per decade, both ends included: 31 points, log step 0.1
        assert f.size == 31 and f[0] == 1e3 and f[-1] == 1e6
        np.testing.assert_allclose(np.diff(np.log10(f)), 0.1, rtol=1e-12)
        h, tau = rx40k_closed_form(f)
        np.testing.assert_allclose(data[:, 1], 20 * np.log10(np.abs(h)), atol=1e-9)
        np.testing.assert_allclose(data[:, 2], np.degrees(np.angle(h)), atol=1e-7)
        np.testing.assert_allclose(data[:, 3], tau, rtol=1e-8)

    def test_csv_file_equals_stdout(self, capsys, samples, tmp_path):
        args = [str(samples / "rx40k.cir"), "--source", "VIN", "--node", "out", "--start",
                "10k", "--stop", "100k", "--ppd", "7"]
        _, out, _ = sweep(capsys, *args, "--csv", "-")
        target = tmp_path / "deep" / "sweep.csv"
        code, printed, _ = sweep(capsys, *args, "--csv", str(target))
        assert code == OK and printed == ""
        assert target.read_text() == out

    @pytest.mark.parametrize("start,stop,ppd,count", [
        ("1k", "1meg", "1", 4), ("1k", "1meg", "100", 301), ("100", "100k", "5", 16),
        ("1k", "5k", "10", 8), ("38k", "42k", "50", 3),
    ])
    def test_grid(self, capsys, samples, start, stop, ppd, count):
        code, out, _ = sweep(capsys, str(samples / "rx40k.cir"), "--source", "VIN", "--node",
                             "out", "--start", start, "--stop", stop, "--ppd", ppd, "--csv", "-")
        assert code == OK
        f = rows(out)[:, 0]
        lo, hi = parse_quantity(start), parse_quantity(stop)
        # both ends exactly, log-spaced in between, round(decades * ppd) + 1 points
        # (counted by hand in the table); a whole number of decades gives steps of 1/ppd
        assert (f[0], f[-1], f.size) == (lo, hi, count)
        step = np.diff(np.log10(f))
        np.testing.assert_allclose(step, math.log10(hi / lo) / (count - 1), rtol=1e-9)
        if math.log10(hi / lo).is_integer():
            np.testing.assert_allclose(step, 1 / int(ppd), rtol=1e-9)


class TestJson:
    def test_json_to_stdout(self, capsys, samples):
        code, out, _ = sweep(capsys, str(samples / "rx40k.cir"), "--source", "vin", "--node",
                             "OUT", "--start", "20k", "--stop", "80k", "--ppd", "20",
                             "--json", "-")
        assert code == OK
        doc = json.loads(out)
        assert doc["schema"] == "netcheck.sweep/1"
        assert doc["source"] == "VIN"
        f = np.array(doc["frequency_hz"])
        assert f[0] == 20e3 and f[-1] == 80e3 and f.size == 13
        h, tau = rx40k_closed_form(f)
        np.testing.assert_allclose(doc["magnitude_db"], 20 * np.log10(np.abs(h)), atol=1e-9)
        np.testing.assert_allclose(doc["phase_deg"], np.degrees(np.angle(h)), atol=1e-7)
        np.testing.assert_allclose(doc["group_delay_s"], tau, rtol=1e-8)

    def test_csv_and_json_are_exclusive(self, capsys, samples):
        with pytest.raises(SystemExit) as info:
            main(["sweep", str(samples / "rx40k.cir"), "--source", "VIN", "--node", "out",
                  "--start", "1k", "--stop", "2k", "--ppd", "2", "--csv", "-", "--json", "-"])
        assert info.value.code == 2


class TestStimulus:
    def test_current_source_gives_transimpedance(self, capsys, samples):
        # tank_tia.cir: I into a parallel RLC; Z = 1/(1/R + 1/(jwL) + jwC), |Z(f0)| = R
        code, out, _ = sweep(capsys, str(samples / "tank_tia.cir"), "--source", "ISENSE",
                             "--node", "out", "--start", "1k", "--stop", "100k", "--ppd", "50",
                             "--csv", "-")
        assert code == OK
        data = rows(out)
        w = 2 * math.pi * data[:, 0]
        z = 1 / (1 / 10e3 + 1 / (1j * w * 10e-3) + 1j * w * 25.33e-9)
        np.testing.assert_allclose(data[:, 1], 20 * np.log10(np.abs(z)), atol=1e-9)
        assert data[:, 1].max() == pytest.approx(80.0, abs=0.05)  # 20 log10(10 kohm)

    def test_summary_names_the_unit(self, capsys, samples):
        code, out, _ = sweep(capsys, str(samples / "tank_tia.cir"), "--source", "ISENSE",
                             "--node", "out", "--start", "1k", "--stop", "100k", "--ppd", "50")
        assert code == OK
        assert "dB re 1 V/A" in out and "peak gain" in out
        code, out, _ = sweep(capsys, str(samples / "rx40k.cir"), "--source", "VIN",
                             "--node", "out", "--start", "1k", "--stop", "100k", "--ppd", "50")
        assert "dB (V/V)" in out

    def test_voltage_source_ratio_and_reference_node(self, capsys, tmp_path):
        # resistive divider 1k / 3k: V(mid)/V(in) = 3/4, V(in)-V(mid) = 1/4
        path = tmp_path / "div.cir"
        path.write_text("divider\nV1 in 0 AC 1\nR1 in mid 1k\nR2 mid 0 3k\n")
        base = [str(path), "--source", "V1", "--start", "1k", "--stop", "10k", "--ppd", "2",
                "--csv", "-"]
        _, out, _ = sweep(capsys, *base, "--node", "mid")
        np.testing.assert_allclose(rows(out)[:, 1], 20 * math.log10(0.75), atol=1e-12)
        _, out, _ = sweep(capsys, *base, "--node", "in", "--ref", "mid")
        np.testing.assert_allclose(rows(out)[:, 1], 20 * math.log10(0.25), atol=1e-12)

    def test_warnings_go_to_stderr_and_quiet_hides_them(self, capsys, tmp_path):
        path = tmp_path / "w.cir"
        path.write_text("warn\nV1 in 0 1\nR1 in out 1M\nR2 out 0 1k\n")
        args = [str(path), "--source", "V1", "--node", "out", "--start", "1k", "--stop",
                "10k", "--ppd", "2", "--csv", "-"]
        code, out, err = sweep(capsys, *args)
        assert code == OK and out.startswith(HEADER)
        assert f"{path}:3:11: warning netlist-151" in err
        assert "warning netlist-153" in err  # V1 has no AC value
        code, out, err = sweep(capsys, *args, "-q")
        assert code == OK and err == ""


class TestBadInput:
    @pytest.mark.parametrize("name,where", [("zero_capacitor.cir", "4:14: error netlist-110"),
                                            ("paren_value.cir", "4:11: error netlist-100"),
                                            ("missing_include.cir", "2:10: error netlist-104")])
    def test_bad_netlist(self, capsys, name, where):
        path = BAD / name
        code, out, err = sweep(capsys, str(path), "--source", "VIN", "--node", "out",
                               "--start", "1k", "--stop", "10k", "--ppd", "2", "--csv", "-")
        assert code == BAD_INPUT
        assert out == ""
        lines = err.split("\n")
        assert lines[0].startswith(f"{path}:{where}: ")
        assert lines[2].lstrip().startswith("^")
        assert "Traceback" not in err

    @pytest.mark.parametrize("extra,message", [
        (["--source", "VX", "--node", "out"], "error netlist-107: stimulus source 'VX'"),
        (["--source", "RSENSE", "--node", "out"], "error netlist-107: stimulus RSENSE is not"),
        (["--source", "VIN", "--node", "nowhere"], "error netlist-115: output node 'nowhere'"),
    ])
    def test_bad_request(self, capsys, samples, extra, message):
        code, out, err = sweep(capsys, str(samples / "rx40k.cir"), *extra, "--start", "1k",
                               "--stop", "10k", "--ppd", "2")
        assert code == BAD_INPUT and out == ""
        assert message in err and "Traceback" not in err

    def test_missing_file(self, capsys, tmp_path):
        code, _, err = sweep(capsys, str(tmp_path / "nope.cir"), "--source", "V1", "--node",
                             "a", "--start", "1k", "--stop", "10k", "--ppd", "2")
        assert code == BAD_INPUT
        assert "error netlist-104: cannot read netlist" in err

    def test_start_not_below_stop(self, capsys, samples):
        code, _, err = sweep(capsys, str(samples / "rx40k.cir"), "--source", "VIN", "--node",
                             "out", "--start", "10k", "--stop", "1k", "--ppd", "2")
        assert code == BAD_INPUT and "--start < --stop" in err

    @pytest.mark.parametrize("flag,value", [("--start", "abc"), ("--stop", "1M5"),
                                            ("--ppd", "0"), ("--ppd", "2.5")])
    def test_bad_argument_values(self, capsys, samples, flag, value):
        args = {"--start": "1k", "--stop": "10k", "--ppd": "2"}
        args[flag] = value
        with pytest.raises(SystemExit) as info:
            main(["sweep", str(samples / "rx40k.cir"), "--source", "VIN", "--node", "out",
                  *[x for kv in args.items() for x in kv]])
        assert info.value.code == 2
        assert "Traceback" not in capsys.readouterr().err


def test_summary_peak_is_refined_between_grid_points(capsys, samples):
    # rx40k.cir sets C = 1/((2 pi fc)^2 L) with fc = 40k, so the series resonance
    # f0 = 1/(2 pi sqrt(LC)) is exactly 40 kHz (textbook); 5 points per decade put no
    # grid point near it, yet the summary reports it.
    from netcheck.cli import main
    assert main(["sweep", str(samples / "rx40k.cir"), "--source", "VIN", "--node", "out",
                 "--start", "1k", "--stop", "1meg", "--ppd", "5"]) == 0
    out = capsys.readouterr().out
    assert "at 40.00000 kHz (refined)" in out


class TestAcCardDefault:
    """With no --start/--stop/--ppd the netlist's own .ac card is the sweep."""

    TEXT = ("Quillmere QM-7 anti-alias RC\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 100n\n"
            ".tran 1u 1m\n{card}\n")

    def write(self, tmp_path, card):
        path = tmp_path / "qm7.cir"
        path.write_text(self.TEXT.format(card=card))
        return str(path)

    def test_dec_card_gives_the_grid_and_the_closed_form(self, capsys, tmp_path):
        code, out, err = sweep(capsys, self.write(tmp_path, ".ac dec 10 100 100k"),
                               "--source", "V1", "--node", "out", "--csv", "-")
        assert code == OK and "sweep taken from the netlist's .ac card" in err
        data = rows(out)
        f = data[:, 0]
        # 3 decades at 10 per decade, both ends included (the card's own numbers)
        assert f.size == 31 and f[0] == 100.0 and f[-1] == 1e5
        # RC low-pass |H| = 1/sqrt(1 + (wRC)^2) (common practice, no source)
        want = -10 * np.log10(1 + (2 * np.pi * f * 1e3 * 100e-9) ** 2)
        np.testing.assert_allclose(data[:, 1], want, atol=1e-9)

    def test_the_note_has_its_code_and_the_card_position_like_every_note(self, capsys,
                                                                         tmp_path):
        path = self.write(tmp_path, "  .ac dec 10 100 100k")
        code, out, err = sweep(capsys, path, "--source", "V1", "--node", "out", "--csv", "-")
        # the card is line 6 of TEXT (title, V1, R1, C1, .tran, card), column 3
        head, caret = err.splitlines()[:2]
        assert code == OK and head.startswith(
            f"{path}:6:3: note netlist-164: sweep taken from the netlist's .ac card: "
            "100.0 Hz to 100.0 kHz, 10 points per decade;")
        assert caret.strip() == ".ac dec 10 100 100k"
        code, out, err = sweep(capsys, path, "--source", "V1", "--node", "out", "--csv", "-",
                               "--quiet")
        assert code == OK and "netlist-164" not in err

    def test_oct_card_becomes_a_log_grid_and_says_so(self, capsys, tmp_path):
        code, out, err = sweep(capsys, self.write(tmp_path, ".ac oct 3 1k 8k"),
                               "--source", "V1", "--node", "out", "--csv", "-")
        # 3 per octave = 3 log2(10) = 9.97 -> 10 per decade
        assert code == OK and "3 per octave as 10 per decade" in err
        f = rows(out)[:, 0]
        assert f[0] == 1e3 and f[-1] == 8e3
        # 3 octaves at 3 per octave: the card's own 10 points, log-spaced
        assert f.size == 10
        np.testing.assert_allclose(np.diff(np.log10(f)), math.log10(8) / 9, rtol=1e-12)

    def test_flags_given_win_over_the_card(self, capsys, tmp_path):
        code, out, err = sweep(capsys, self.write(tmp_path, ".ac dec 10 100 100k"),
                               "--source", "V1", "--node", "out", "--start", "1k",
                               "--csv", "-")
        f = rows(out)[:, 0]
        assert code == OK and f[0] == 1e3 and f[-1] == 1e5

    def test_no_card_and_no_flags_is_a_clear_error(self, capsys, tmp_path):
        code, out, err = sweep(capsys, self.write(tmp_path, "* no sweep here"),
                               "--source", "V1", "--node", "out")
        assert code == BAD_INPUT and "no .ac card" in err and "--start" in err
