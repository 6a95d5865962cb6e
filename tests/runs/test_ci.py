"""Tests for netcheck.runs.ci: affected specs from git, margins that shrank since an earlier
result (the "baseline" of the Python names), the pre-commit hook."""

from __future__ import annotations

import copy
import doctest
import json
import re
import shutil
import subprocess
import tomllib
from pathlib import Path

import pytest
import yaml

import netcheck.runs.baseline
import netcheck.runs.affected
from netcheck.runs.ci import (AffectedSpec, BaselineError, GitError, LimitRef, SpecRef,
                         affected_specs, compare_baseline, load_baseline, validate_result)
from netcheck.exceptions import NetcheckError
from netcheck.render.jsonreport import SCHEMA, to_dict
from netcheck.result import CheckResult, LimitResult, SpecResult, Status

ROOT = Path(__file__).resolve().parents[2]

pytestmark = pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")


# --------------------------------------------------------------------------- git fixture

TOP_CIR = """\
Quillmere Instruments - anti-alias low-pass, rev A
.include "lib/parts.lib"
VIN in 0 AC 1
XF in out 0 rcstage
.end
"""
PARTS_LIB = """\
* Quillmere Instruments part library
.include "models/values.inc"
.subckt rcstage a b g
R1 a b {rval}
C1 b g 10n
.ends
"""
VALUES_INC = """\
* nominal values
.param rval=1k
"""
OTHER_CIR = """\
Quillmere Instruments - sense divider
VIN in 0 AC 1
R1 in out 1k
R2 out 0 1k
.end
"""
SPEC = """\
title = "{title}"
netlist = "{netlist}"
source = "VIN"
output = "out"

[sweep]
start = "10"
stop = "1meg"
points_per_decade = 10

[[limits]]
kind = "gain"
name = "pass-band"
band = ["10", "100"]
max_db = 1
"""


def _git(repo: Path, *args: str) -> str:
    proc = subprocess.run(["git", *args], cwd=repo, capture_output=True, text=True, check=True)
    return proc.stdout


def _write(path: Path, text: str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")


@pytest.fixture
def repo(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A committed design repository: spec a → top.cir → parts.lib → values.inc; spec b → other.cir."""
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))
    root = tmp_path / "design"
    _write(root / "nets" / "top.cir", TOP_CIR)
    _write(root / "nets" / "lib" / "parts.lib", PARTS_LIB)
    _write(root / "nets" / "lib" / "models" / "values.inc", VALUES_INC)
    _write(root / "nets" / "other.cir", OTHER_CIR)
    _write(root / "specs" / "a.toml", SPEC.format(title="anti-alias", netlist="../nets/top.cir"))
    _write(root / "specs" / "b.toml", SPEC.format(title="divider", netlist="../nets/other.cir"))
    _git(root, "init", "-q", "-b", "main")
    _git(root, "config", "user.name", "Quillmere CI")
    _git(root, "config", "user.email", "ci@quillmere.invalid")
    _git(root, "config", "commit.gpgsign", "false")
    _git(root, "add", "-A")
    _git(root, "commit", "-q", "-m", "first design")
    return root


def _specs(repo: Path) -> list[str]:
    return [str(repo / "specs" / "a.toml"), str(repo / "specs" / "b.toml")]


class TestAffectedSpecs:
    def test_deepest_include_change_affects_only_its_spec(self, repo):
        _write(repo / "nets/lib/models/values.inc", VALUES_INC.replace("1k", "1.2k"))
        a, b = _specs(repo)
        got = affected_specs([a, b], "HEAD", str(repo))
        assert got.specs == (AffectedSpec(a, ("nets/lib/models/values.inc",)),)
        assert got.paths == (a,)
        assert got.unaffected == (b,)
        assert got.changed_files == ("nets/lib/models/values.inc",)
        assert got.reasons() == {a: ("nets/lib/models/values.inc",)}
        assert Path(got.root).resolve() == repo.resolve()

    def test_committed_change_against_earlier_revision(self, repo):
        _write(repo / "nets/lib/models/values.inc", VALUES_INC.replace("1k", "1.2k"))
        _git(repo, "commit", "-q", "-am", "retune")
        a, b = _specs(repo)
        assert affected_specs([a, b], "HEAD", str(repo)).changed_files == ()
        got = affected_specs([a, b], "HEAD~1", str(repo))
        assert got.paths == (a,)
        assert got.changed_files == ("nets/lib/models/values.inc",)

    def test_nothing_changed(self, repo):
        got = affected_specs(_specs(repo), "HEAD", str(repo))
        assert got.specs == ()
        assert got.changed_files == ()
        assert got.unaffected == tuple(_specs(repo))

    def test_unknown_revision(self, repo):
        with pytest.raises(GitError) as info:
            affected_specs(_specs(repo), "origin/no-such-branch", str(repo))
        assert info.value.code == "run-410"
        assert "unknown git revision 'origin/no-such-branch'" in info.value.message
        assert isinstance(info.value, NetcheckError)

    def test_option_like_revision_is_refused(self, repo):
        with pytest.raises(GitError, match="is not a git revision"):
            affected_specs(_specs(repo), "--output=/tmp/x", str(repo))

    def test_not_a_git_repository(self, tmp_path, monkeypatch):
        monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))
        plain = tmp_path / "plain"
        plain.mkdir()
        with pytest.raises(GitError, match="not inside a git work tree") as info:
            affected_specs([], "HEAD", str(plain))
        assert info.value.format().startswith(f"{plain}: error run-410: ")

    def test_missing_directory(self, tmp_path):
        with pytest.raises(GitError, match="does not exist"):
            affected_specs([], "HEAD", str(tmp_path / "nowhere"))

    def test_git_not_installed(self, repo, monkeypatch, tmp_path):
        monkeypatch.setenv("PATH", str(tmp_path / "empty-bin"))
        with pytest.raises(GitError, match="git is not installed"):
            affected_specs(_specs(repo), "HEAD", str(repo))

    def test_git_timeout(self, repo, monkeypatch):
        def hang(cmd, **kwargs):
            raise subprocess.TimeoutExpired(cmd, kwargs["timeout"])
        monkeypatch.setattr(netcheck.runs.affected.subprocess, "run", hang)
        with pytest.raises(GitError, match=r"did not finish within 2\.5 s"):
            affected_specs(_specs(repo), "HEAD", str(repo), timeout=2.5)

    def test_untracked_spec_and_spec_edit(self, repo):
        _write(repo / "specs" / "c.toml", SPEC.format(title="new", netlist="../nets/other.cir"))
        spec_b = repo / "specs" / "b.toml"
        spec_b.write_text(spec_b.read_text().replace("max_db = 1", "max_db = 0.5"))
        a, b = _specs(repo)
        c = str(repo / "specs" / "c.toml")
        got = affected_specs([a, b, c], "HEAD", str(repo))
        assert got.specs == (AffectedSpec(b, ("specs/b.toml",)), AffectedSpec(c, ("specs/c.toml",)))
        assert got.changed_files == ("specs/b.toml", "specs/c.toml")

    def test_ignored_files_do_not_count(self, repo):
        _write(repo / ".gitignore", "*.bak\n")
        _git(repo, "add", ".gitignore")
        _git(repo, "commit", "-q", "-m", "ignore backups")
        _write(repo / "nets" / "top.cir.bak", TOP_CIR)
        assert affected_specs(_specs(repo), "HEAD", str(repo)).changed_files == ()

    def test_relative_paths_are_returned_as_given(self, repo, monkeypatch):
        monkeypatch.chdir(repo)
        _write(repo / "nets" / "other.cir", OTHER_CIR.replace("R2 out 0 1k", "R2 out 0 2k"))
        got = affected_specs(["specs/a.toml", "./specs/b.toml", "specs/a.toml"], "HEAD")
        assert got.specs == (AffectedSpec("./specs/b.toml", ("nets/other.cir",)),)
        assert got.unaffected == ("specs/a.toml",)

    def test_spec_that_fails_to_load_is_affected(self, repo):
        bad = repo / "specs" / "broken.toml"
        _write(bad, 'netlist = "../nets/other.cir"\nsource = \n')
        _git(repo, "add", "-A")
        _git(repo, "commit", "-q", "-m", "broken spec")
        got = affected_specs([str(bad), *_specs(repo)], "HEAD", str(repo))
        assert got.paths == (str(bad),)
        assert got.specs[0].changed == ()
        assert "error spec-200" in got.specs[0].error

    def test_unparsable_netlist_falls_back_to_itself(self, repo):
        _write(repo / "nets" / "other.cir", OTHER_CIR + "R3 out (0) 1k\n")
        _git(repo, "commit", "-q", "-am", "typo in the divider")
        a, b = _specs(repo)
        _write(repo / "nets/lib/models/values.inc", VALUES_INC.replace("1k", "1.2k"))
        assert affected_specs([a, b], "HEAD", str(repo)).paths == (a,)
        _write(repo / "nets" / "other.cir", OTHER_CIR + "R3 out (1) 1k\n")
        got = affected_specs([a, b], "HEAD", str(repo))
        assert got.reasons() == {a: ("nets/lib/models/values.inc",), b: ("nets/other.cir",)}

    def test_syntax_error_deep_in_an_include_is_tracked(self, repo):
        _write(repo / "nets/lib/models/values.inc", VALUES_INC + ".param = 3\n")
        _git(repo, "commit", "-q", "-am", "broken values")
        _write(repo / "nets/lib/models/values.inc", VALUES_INC + ".param = 4\n")
        a, b = _specs(repo)
        got = affected_specs([a, b], "HEAD", str(repo))
        assert got.reasons() == {a: ("nets/lib/models/values.inc",)}

    def test_deleted_include_affects_the_spec_that_needed_it(self, repo):
        (repo / "nets/lib/models/values.inc").unlink()
        a, b = _specs(repo)
        got = affected_specs([a, b], "HEAD", str(repo))
        assert got.specs == (AffectedSpec(a, ("nets/lib/models/values.inc",)),)

    def test_renamed_file_counts_under_both_names(self, repo):
        _git(repo, "mv", "nets/other.cir", "nets/divider.cir")
        got = affected_specs(_specs(repo), "HEAD", str(repo))
        assert got.changed_files == ("nets/divider.cir", "nets/other.cir")
        assert got.paths == (_specs(repo)[1],)

    def test_design_root_for_specs_without_one(self, repo):
        _write(repo / "nets" / "fam" / "v1.cir", TOP_CIR.replace("lib/", "../lib/"))
        spec = repo / "specs" / "wide.toml"
        _write(spec, SPEC.format(title="wide", netlist="../nets/fam/v1.cir"))
        _git(repo, "add", "-A")
        _git(repo, "commit", "-q", "-m", "netlist including from a sibling folder")
        _write(repo / "nets/lib/models/values.inc", VALUES_INC.replace("1k", "1.2k"))
        # without a root the include leaves v1.cir's folder and cannot be followed
        assert affected_specs([str(spec)], "HEAD", str(repo)).paths == ()
        got = affected_specs([str(spec)], "HEAD", str(repo), root=str(repo))
        assert got.reasons() == {str(spec): ("nets/lib/models/values.inc",)}

    def test_variant_table_and_netlist_family_are_inputs(self, repo):
        spec = repo / "specs" / "family.toml"
        _write(spec, 'root = ".."\n' + SPEC.format(title="family", netlist="../nets/other.cir")
               + '\n[variants]\ntable = "family.csv"\nnetlists = ["../nets/fam/*.cir"]\n')
        _write(repo / "specs" / "family.csv", "name,rval\nlow,1k\n")
        _write(repo / "nets" / "fam" / "v1.cir", TOP_CIR.replace("lib/", "../lib/"))
        _write(repo / "nets" / "fam" / "v2.cir", OTHER_CIR)
        _git(repo, "add", "-A")
        _git(repo, "commit", "-q", "-m", "family")
        a, b = _specs(repo)
        s = str(spec)
        _write(repo / "specs" / "family.csv", "name,rval\nlow,1.1k\n")
        assert affected_specs([a, b, s], "HEAD", str(repo)).reasons() == {
            s: ("specs/family.csv",)}
        _git(repo, "checkout", "-q", "--", "specs/family.csv")
        _write(repo / "nets/lib/models/values.inc", VALUES_INC.replace("1k", "1.2k"))
        assert affected_specs([a, b, s], "HEAD", str(repo)).paths == (a, s)
        _git(repo, "checkout", "-q", "--", ".")
        (repo / "nets" / "fam" / "v2.cir").unlink()
        assert affected_specs([a, b, s], "HEAD", str(repo)).reasons() == {
            s: ("nets/fam/v2.cir",)}


# --------------------------------------------------------------------------- baseline drift


def _limit(name: str, margin, unit: str = "dB", status: str | None = None) -> dict:
    if status is None:
        status = "error" if margin is None else ("pass" if float(margin) >= 0 else "fail")
    return {"name": name, "kind": "gain", "status": status, "margin": margin, "unit": unit}


def _doc(*specs: dict) -> dict:
    return {"schema": SCHEMA, "tool_version": "0.1.0", "created_utc": None, "status": "pass",
            "counts": {}, "specs": list(specs)}


def _spec(path: str, *limits: dict, variant: str | None = None, status: str = "pass") -> dict:
    out = {"spec": path, "status": status, "limits": list(limits)}
    if variant is not None:
        out["variant"] = variant
    return out


BASELINE = _doc(
    _spec("specs/rx40k.toml",
          _limit("low stop-band", 5.3),
          _limit("pass-band flatness", 0.43),
          _limit("resonance: centre", 400.0, "Hz"),
          _limit("resonance: bandwidth", 327.8, "Hz"),
          _limit("resonance: Q", 0.98, "")),
    _spec("specs/notch.toml", _limit("notch depth", 12.0)),
)
RX = SpecRef("specs/rx40k.toml")


def _current(**margins) -> dict:
    """BASELINE with some rx40k margins replaced (keys: limit names with _ for spaces)."""
    doc = copy.deepcopy(BASELINE)
    for lim in doc["specs"][0]["limits"]:
        key = lim["name"].replace(" ", "_").replace(":", "").replace("-", "_")
        if key in margins:
            lim["margin"] = margins[key]
            lim["status"] = "pass" if margins[key] >= 0 else "fail"
    return doc


class TestCompareBaseline:
    def test_identical_results_do_not_drift(self):
        report = compare_baseline(copy.deepcopy(BASELINE), BASELINE)
        assert report.drifted == () and not report.has_drift and not report.changed
        assert report.compared == 6

    def test_db_drop_above_threshold_is_flagged_while_passing(self):
        report = compare_baseline(_current(low_stop_band=4.7), BASELINE)
        [d] = report.drifted
        assert d.limit == LimitRef(RX, "low stop-band")
        assert d.unit == "dB" and d.allowed_drop == 0.5
        assert d.drop == pytest.approx(0.6)
        assert d.still_passes
        assert d.describe() == ("specs/rx40k.toml: low stop-band: margin 5.300 dB → 4.700 dB "
                                "(fell 0.600 dB, allowed 0.500 dB; still passes)")

    def test_db_drop_below_threshold_is_not_flagged(self):
        assert compare_baseline(_current(low_stop_band=4.9), BASELINE).drifted == ()

    def test_db_threshold_is_absolute_even_for_small_margins(self):
        # 0.43 dB → 0.05 dB is a 88 % fall but only 0.38 dB: not drift at drift_db = 0.5
        assert compare_baseline(_current(pass_band_flatness=0.05), BASELINE).drifted == ()
        [d] = compare_baseline(_current(pass_band_flatness=0.05), BASELINE, drift_db=0.3).drifted
        assert d.limit.name == "pass-band flatness"

    def test_db_drop_into_failure(self):
        [d] = compare_baseline(_current(pass_band_flatness=-0.2), BASELINE).drifted
        assert not d.still_passes and d.current_status == "fail"
        assert d.describe().endswith("allowed 0.500 dB; fail)")

    def test_relative_drop_for_hz(self):
        # 10 % of 400 Hz is 40 Hz: a fall of 50 Hz drifts, 30 Hz does not
        [d] = compare_baseline(_current(resonance_centre=350.0), BASELINE).drifted
        assert d.limit == LimitRef(RX, "resonance: centre")
        assert d.allowed_drop == pytest.approx(40.0)
        assert d.drop == pytest.approx(50.0)
        assert compare_baseline(_current(resonance_centre=370.0), BASELINE).drifted == ()
        assert compare_baseline(_current(resonance_centre=370.0), BASELINE,
                                drift_rel=0.05).has_drift

    def test_relative_drop_for_unitless_q(self):
        [d] = compare_baseline(_current(resonance_Q=0.85), BASELINE).drifted
        assert d.unit == "" and d.allowed_drop == pytest.approx(0.098)

    def test_improvement_is_never_drift(self):
        assert compare_baseline(_current(low_stop_band=9.0, resonance_centre=900.0),
                                BASELINE).drifted == ()

    def test_zero_baseline_margin_flags_any_fall(self):
        base = _doc(_spec("s.toml", _limit("corner", 0.0, "Hz")))
        [d] = compare_baseline(_doc(_spec("s.toml", _limit("corner", -1e-3, "Hz"))), base).drifted
        assert d.allowed_drop == 0.0
        assert compare_baseline(_doc(_spec("s.toml", _limit("corner", 0.0, "Hz"))), base).drifted == ()
        assert compare_baseline(_doc(_spec("s.toml", _limit("corner", 2.0, "Hz"))), base).drifted == ()

    def test_negative_baseline_margin_uses_its_magnitude(self):
        base = _doc(_spec("s.toml", _limit("bw", -100.0, "Hz")))
        assert compare_baseline(_doc(_spec("s.toml", _limit("bw", -105.0, "Hz"))), base).drifted == ()
        [d] = compare_baseline(_doc(_spec("s.toml", _limit("bw", -115.0, "Hz"))), base).drifted
        assert d.allowed_drop == pytest.approx(10.0)

    def test_new_and_removed_limits(self):
        current = copy.deepcopy(BASELINE)
        rx = current["specs"][0]["limits"]
        del rx[1]                                   # pass-band flatness removed
        rx.append(_limit("group delay", 2.4e-5, "s"))  # new
        report = compare_baseline(current, BASELINE)
        assert report.new_limits == (LimitRef(RX, "group delay"),)
        assert report.removed_limits == (LimitRef(RX, "pass-band flatness"),)
        assert report.drifted == () and report.changed

    def test_new_and_removed_specs_and_variants(self):
        current = _doc(BASELINE["specs"][0], _spec("specs/rx40k.toml", _limit("low stop-band", 1.0),
                                                   variant="cold"))
        report = compare_baseline(current, BASELINE)
        assert report.new_specs == (SpecRef("specs/rx40k.toml", "cold"),)
        assert report.removed_specs == (SpecRef("specs/notch.toml"),)
        assert report.new_limits == () and report.drifted == ()
        assert str(report.new_specs[0]) == "specs/rx40k.toml [cold]"

    def test_variants_are_matched_separately(self):
        base = _doc(_spec("f.toml", _limit("g", 3.0), variant="a"),
                    _spec("f.toml", _limit("g", 3.0), variant="b"))
        current = _doc(_spec("f.toml", _limit("g", 3.0), variant="b"),
                       _spec("f.toml", _limit("g", 1.0), variant="a"))
        [d] = compare_baseline(current, base).drifted
        assert d.limit == LimitRef(SpecRef("f.toml", "a"), "g")

    def test_spec_paths_are_normalised(self):
        current = copy.deepcopy(BASELINE)
        current["specs"][0]["spec"] = "./specs\\rx40k.toml"
        current["specs"][0]["limits"][0]["margin"] = 1.0
        report = compare_baseline(current, BASELINE)
        assert report.new_specs == () and len(report.drifted) == 1

    def test_unit_change_is_removed_and_new(self):
        current = copy.deepcopy(BASELINE)
        current["specs"][0]["limits"][2]["unit"] = "kHz"
        report = compare_baseline(current, BASELINE)
        assert report.new_limits == report.removed_limits == (LimitRef(RX, "resonance: centre"),)
        assert report.compared == 5

    def test_limit_no_longer_measured_is_drift(self):
        current = copy.deepcopy(BASELINE)
        current["specs"][0]["limits"][3].update(margin=None, status="error")
        [d] = compare_baseline(current, BASELINE).drifted
        assert d.current_margin is None and d.drop is None and not d.still_passes
        assert d.describe() == ("specs/rx40k.toml: resonance: bandwidth: margin 327.8 Hz → "
                                "not measured (error)")

    def test_errored_spec_drifts_every_limit_instead_of_removing_them(self):
        current = copy.deepcopy(BASELINE)
        current["specs"][1] = _spec("specs/notch.toml", status="error")
        current["specs"][1]["error"] = "specs/notch.toml:1:1: error netlist-100: ..."
        report = compare_baseline(current, BASELINE)
        assert report.removed_limits == ()
        assert [d.limit for d in report.drifted] == [LimitRef(SpecRef("specs/notch.toml"),
                                                              "notch depth")]

    def test_unmeasured_in_baseline_is_not_compared(self):
        base = _doc(_spec("s.toml", _limit("g", None)))
        report = compare_baseline(_doc(_spec("s.toml", _limit("g", -4.0))), base)
        assert report.drifted == () and report.compared == 0

    def test_repeated_limit_names_pair_in_order(self):
        base = _doc(_spec("s.toml", _limit("resonance: Q", 2.0, ""), _limit("resonance: Q", 5.0, "")))
        cur = _doc(_spec("s.toml", _limit("resonance: Q", 2.0, ""), _limit("resonance: Q", 4.0, "")))
        [d] = compare_baseline(cur, base).drifted
        assert d.limit.name == "resonance: Q #2" and d.baseline_margin == 5.0

    def test_infinite_margins_are_read(self):
        base = _doc(_spec("s.toml", _limit("g", "inf", "Hz", "pass")))
        assert compare_baseline(_doc(_spec("s.toml", _limit("g", "inf", "Hz", "pass"))),
                                base).drifted == ()
        [d] = compare_baseline(_doc(_spec("s.toml", _limit("g", "-inf", "Hz", "fail"))),
                               base).drifted
        assert d.current_margin == float("-inf")

    def test_only_specs_restricts_both_sides(self):
        current = _doc(_current(low_stop_band=1.0)["specs"][0])   # notch.toml not re-checked
        report = compare_baseline(current, BASELINE, only_specs=["./specs/rx40k.toml"])
        assert report.removed_specs == ()
        assert [d.limit.name for d in report.drifted] == ["low stop-band"]
        assert compare_baseline(current, BASELINE).removed_specs == (SpecRef("specs/notch.toml"),)

    def test_works_on_the_json_renderer_output(self):
        def result(margin_db: float, margin_hz: float) -> CheckResult:
            lims = (LimitResult("stop-band", "gain", Status.PASS, -30.0 - margin_db, None, -30.0,
                                margin_db, "dB"),
                    LimitResult("corner", "corner", Status.PASS, 1000.0, 1000.0 - margin_hz,
                                1100.0, margin_hz, "Hz"))
            return CheckResult((SpecResult("specs/lp.toml", "nets/lp.cir", "Quillmere low-pass",
                                           Status.PASS, lims),), "0.1.0")
        base = json.loads(json.dumps(to_dict(result(3.0, 50.0))))
        report = compare_baseline(to_dict(result(2.0, 48.0)), base)
        assert [(d.limit.name, d.drop) for d in report.drifted] == [("stop-band", 1.0)]

    @pytest.mark.parametrize("name,value", [("drift_db", -0.1), ("drift_rel", float("nan")),
                                            ("drift_db", "lots")])
    def test_bad_thresholds(self, name, value):
        with pytest.raises(ValueError, match=name):
            compare_baseline(BASELINE, BASELINE, **{name: value})

    @pytest.mark.parametrize("doc,message", [
        ([], "not a netcheck result: expected a JSON object"),
        ({"specs": []}, 'no "schema" key'),
        ({"schema": "coverage.py/7", "specs": []}, "not a netcheck result: schema is"),
        ({"schema": "netcheck.result/2", "specs": []}, "write the earlier result again"),
        ({"schema": SCHEMA, "specs": {}}, "expected an array of spec results"),
        ({"schema": SCHEMA, "specs": [{"spec": "a.toml", "limits": [{"name": "g",
                                                                       "margin": "big"}]}]},
         'expected a number, "inf", "-inf" or null'),
    ])
    def test_not_a_result_document(self, doc, message):
        with pytest.raises(BaselineError, match=re.escape(message)) as info:
            compare_baseline(BASELINE, doc)
        assert info.value.code == "run-411"
        assert info.value.location().startswith("earlier result")

    def test_error_names_the_key(self):
        doc = copy.deepcopy(BASELINE)
        doc["specs"][1]["limits"][0]["margin"] = [1]
        with pytest.raises(BaselineError) as info:
            validate_result(doc, "prev.json")
        assert info.value.location() == "prev.json: specs[1].limits[0].margin"


class TestLoadBaseline:
    def test_round_trip(self, tmp_path):
        path = tmp_path / "previous-result.json"
        path.write_text(json.dumps(BASELINE, indent=2), encoding="utf-8")
        assert load_baseline(path) == BASELINE

    def test_bad_json_is_located(self, tmp_path):
        path = tmp_path / "previous-result.json"
        path.write_text('{\n  "schema": "netcheck.result/1",\n  "specs": [,]\n}\n', encoding="utf-8")
        with pytest.raises(BaselineError) as info:
            load_baseline(path)
        text = info.value.format()
        assert text.startswith(f"{path}:3:13: error run-411: not valid JSON: Expecting value")
        # the source line, indented four spaces, and a caret under the stray comma
        assert text.splitlines()[1:] == ['      "specs": [,]', " " * 16 + "^"]

    def test_missing_file(self, tmp_path):
        with pytest.raises(BaselineError, match="cannot read earlier result"):
            load_baseline(tmp_path / "absent.json")

    def test_not_utf8(self, tmp_path):
        path = tmp_path / "r.json"
        path.write_bytes(b'{"schema": "\xff"}')
        with pytest.raises(BaselineError, match="not UTF-8"):
            load_baseline(path)

    def test_other_json_is_refused(self, tmp_path):
        path = tmp_path / "coverage.json"
        path.write_text('{"meta": {"format": 3}, "files": {}}', encoding="utf-8")
        with pytest.raises(BaselineError, match='no "schema" key') as info:
            load_baseline(path)
        assert info.value.location() == f"{path}: schema"


def test_docstring_examples():
    # the examples sit on compare_baseline, defined in netcheck.runs.baseline and re-exported by netcheck.runs.ci
    outcome = doctest.testmod(netcheck.runs.baseline)
    assert outcome.attempted > 0 and outcome.failed == 0


def test_every_public_name_resolves():
    import netcheck.runs.ci
    assert [name for name in netcheck.runs.ci.__all__ if not hasattr(netcheck.runs.ci, name)] == []


# --------------------------------------------------------------------------- pre-commit, docs


class TestPreCommitHook:
    def test_hook_definition(self):
        hooks = yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text(encoding="utf-8"))
        assert isinstance(hooks, list)
        [hook] = [h for h in hooks if h["id"] == "netcheck"]
        for key in ("id", "name", "description", "entry", "language", "files",
                    "pass_filenames", "args"):
            assert key in hook, key
        assert hook["entry"] == "netcheck check"
        assert hook["language"] == "python"
        assert hook["pass_filenames"] is False
        assert hook["args"] == ["specs/"]

    def test_file_pattern(self):
        [hook] = yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text(encoding="utf-8"))
        pattern = re.compile(hook["files"])
        for name in ("specs/rx40k.toml", "sample_netlists/lib/opamp.lib", "nets/top.cir",
                     "models/buffer.sp", "nets/lib/models/values.inc"):
            assert pattern.search(name), name
        for name in ("README.md", "specs/rx40k.toml.orig", "netcheck/ci.py", "nets/cir"):
            assert not pattern.search(name), name

    def test_entry_is_the_installed_command(self):
        project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
        [hook] = yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text(encoding="utf-8"))
        command, sub = hook["entry"].split()
        assert project["project"]["scripts"][command] == "netcheck.cli:main"
        from netcheck.cli import build_parser
        assert build_parser().parse_args([sub, *hook["args"]]).paths == ["specs/"]


def test_docs_use_only_options_the_cli_has():
    from netcheck.cli import build_parser
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command").choices["check"]
    known = set(sub._option_string_actions)
    text = (ROOT / "docs" / "ci.md").read_text(encoding="utf-8").replace("\\\n", " ")
    used = {opt for line in text.splitlines() if "netcheck check" in line
            for opt in re.findall(r"(?<![\w-])--[a-z][a-z-]*", line)}
    assert {"--junit", "--json", "--summary-md", "--sarif", "--affected-since",
            "--compare-margins", "--fail-on-shrink"} <= used
    assert used <= known, sorted(used - known)
    # the examples use the current names, not the earlier spellings kept as aliases
    assert not used & {"--changed-since", "--baseline", "--drift-db", "--drift-rel",
                       "--fail-on-drift"}
