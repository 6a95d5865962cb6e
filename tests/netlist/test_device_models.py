"""Device model cards read into models (netcheck.netlist.device_models).

The defaults checked are the common SPICE convention's, written here **from memory**
(no source at hand); the names and aliases are the convention's too (common practice,
no source). The KP derived from TOX uses ε_ox = 3.9·ε0 (ε0 from CODATA 2018).
"""

from __future__ import annotations

import math

import pytest

from netcheck.exceptions import CODES, ElaborationError
from netcheck.netlist.device_models import (BjtModel, DiodeModel, JfetModel, MosModel,
                                            check_geometry, device_model)
from netcheck.netlist.models import read_model
from netcheck.netlist.params import Env
from netcheck.netlist.parse import load_netlist


def read(card: str, params: str = ""):
    """The device model of one ``.model`` line (line 2 of the netlist, or 3 after a
    ``.param`` line) and its ignored names."""
    net = load_netlist(f"quillmere front end\n{params}{card}\nR1 a 0 1k\n")
    env = Env(None, "top")
    for assign in net.top.params:
        env.define(assign)
    return device_model(read_model(net.top.models[0]), env.value_of)


def refused(card: str) -> ElaborationError:
    with pytest.raises(ElaborationError) as info:
        read(card)
    return info.value


class TestDefaults:
    # the common SPICE convention's defaults, from memory
    def test_diode(self):
        model, ignored = read(".model DQ D")
        assert model == DiodeModel() and ignored == ()
        assert (model.IS, model.N, model.RS, model.CJO, model.VJ, model.M, model.FC,
                model.TT, model.BV, model.IBV, model.TNOM) == (
            1e-14, 1.0, 0.0, 0.0, 1.0, 0.5, 0.5, 0.0, math.inf, 1e-3, 27.0)

    def test_bipolar(self):
        model, _ = read(".model QN NPN")
        assert (model.polarity, model.IS, model.BF, model.BR, model.NF, model.NR, model.VAF,
                model.CJE, model.VJE, model.MJE, model.CJC, model.VJC, model.MJC, model.FC,
                model.TF, model.TR, model.RB, model.RE, model.RC, model.TNOM) == (
            1, 1e-16, 100.0, 1.0, 1.0, 1.0, math.inf, 0.0, 0.75, 0.33, 0.0, 0.75, 0.33, 0.5,
            0.0, 0.0, 0.0, 0.0, 0.0, 27.0)
        assert read(".model QP PNP")[0].polarity == -1
        assert read(".model QL LPNP")[0].polarity == -1

    def test_mos(self):
        model, _ = read(".model MN NMOS")
        assert (model.polarity, model.KP, model.VTO, model.LAMBDA, model.GAMMA, model.PHI,
                model.W, model.L, model.CGSO, model.CGDO, model.CGBO, model.TOX) == (
            1, 2e-5, 0.0, 0.0, 0.0, 0.6, 100e-6, 100e-6, 0.0, 0.0, 0.0, math.inf)
        assert model.COX == 0.0
        assert read(".model MP PMOS")[0].polarity == -1

    def test_jfet(self):
        model, _ = read(".model JN NJF")
        assert (model.polarity, model.BETA, model.VTO, model.LAMBDA, model.IS, model.CGS,
                model.CGD, model.PB, model.FC) == (1, 1e-4, -2.0, 0.0, 1e-14, 0.0, 0.0, 1.0, 0.5)
        assert read(".model JP PJF")[0].polarity == -1


class TestNames:
    def test_values_are_read_with_units_and_parameters(self):
        model, ignored = read(".model DX D(IS={isat*2} N=1.9 RS=4 CJO=2p VJ=0.6 M=0.4 FC=0.3 "
                              "TT=12n TNOM=25)", ".param isat=1f\n")
        assert model == DiodeModel(IS=2e-15, N=1.9, RS=4.0, CJO=2e-12, VJ=0.6, M=0.4, FC=0.3,
                                   TT=12e-9, TNOM=25.0)
        assert ignored == ()

    def test_names_are_matched_whatever_their_case(self):
        model, _ = read(".model q2 npn(bf=250 Is=2f vAf=40 Cje=1p)")
        assert (model.BF, model.IS, model.VAF, model.CJE) == (250.0, 2e-15, 40.0, 1e-12)

    @pytest.mark.parametrize("card,field,value", [
        (".model D1 D(CJ0=3p)", "CJO", 3e-12), (".model Q1 NPN(VA=70)", "VAF", 70.0),
        (".model Q1 NPN(PE=0.9)", "VJE", 0.9), (".model Q1 NPN(ME=0.4)", "MJE", 0.4),
        (".model Q1 NPN(PC=0.6)", "VJC", 0.6), (".model Q1 NPN(MC=0.2)", "MJC", 0.2),
        (".model M1 NMOS(VT0=0.8)", "VTO", 0.8), (".model J1 NJF(VT0=-1.5)", "VTO", -1.5)])
    def test_aliases(self, card, field, value):
        assert getattr(read(card)[0], field) == value

    @pytest.mark.parametrize("card,fields", [
        (".model Q1 NPN(IS=1f BF=80 BR=3 NF=1.01 NR=1.02 VAF=55 CJE=1p VJE=0.8 MJE=0.3 "
         "CJC=2p VJC=0.7 MJC=0.4 FC=0.4 TF=1n TR=10n RB=100 RE=1 RC=10)",
         {"IS": 1e-15, "BF": 80.0, "BR": 3.0, "NF": 1.01, "NR": 1.02, "VAF": 55.0,
          "CJE": 1e-12, "VJE": 0.8, "MJE": 0.3, "CJC": 2e-12, "VJC": 0.7, "MJC": 0.4,
          "FC": 0.4, "TF": 1e-9, "TR": 10e-9, "RB": 100.0, "RE": 1.0, "RC": 10.0}),
        (".model M1 PMOS(LEVEL=1 KP=50u VTO=-0.8 LAMBDA=0.02 GAMMA=0.4 PHI=0.65 W=4u L=1u "
         "CGSO=0.3n CGDO=0.3n CGBO=0.1n TOX=15n RD=5 RS=5)",
         {"KP": 50e-6, "VTO": -0.8, "LAMBDA": 0.02, "GAMMA": 0.4, "PHI": 0.65, "W": 4e-6,
          "L": 1e-6, "CGSO": 0.3e-9, "CGDO": 0.3e-9, "CGBO": 0.1e-9, "TOX": 15e-9,
          "RD": 5.0, "RS": 5.0}),
        (".model J1 PJF(BETA=2m VTO=-3 LAMBDA=0.01 IS=10f N=1.2 CGS=5p CGD=2p PB=0.8 M=0.4 "
         "FC=0.45 RD=20 RS=20)",
         {"BETA": 2e-3, "VTO": -3.0, "LAMBDA": 0.01, "IS": 1e-14, "N": 1.2, "CGS": 5e-12,
          "CGD": 2e-12, "PB": 0.8, "M": 0.4, "FC": 0.45, "RD": 20.0, "RS": 20.0})])
    def test_every_honoured_parameter_is_read(self, card, fields):
        model, ignored = read(card)
        assert {k: getattr(model, k) for k in fields} == pytest.approx(fields, rel=1e-15)
        assert ignored == ()

    def test_vaf_zero_means_no_early_effect(self):
        # the convention writes 0 for "infinite" (common practice, no source)
        assert read(".model Q1 NPN(VAF=0)")[0].VAF == math.inf

    def test_kp_from_tox_and_uo_when_kp_is_not_given(self):
        # KP = µ·Cox, Cox = ε_ox/tox with ε_ox = 3.9·8.8541878128e-12 F/m (CODATA 2018),
        # µ in cm²/V·s → m²/V·s; UO defaults to 600 cm²/V·s (from memory)
        cox = 3.9 * 8.8541878128e-12 / 20e-9
        assert read(".model M1 NMOS(TOX=20n)")[0].KP == pytest.approx(0.06 * cox, rel=1e-14)
        assert read(".model M1 NMOS(TOX=20n UO=450)")[0].KP == pytest.approx(0.045 * cox, rel=1e-14)
        assert read(".model M1 NMOS(TOX=20n KP=80u)")[0].KP == 80e-6      # KP given wins
        assert read(".model M1 NMOS(TOX=20n)")[0].COX == pytest.approx(cox, rel=1e-14)

    def test_names_not_modelled_are_listed_as_written(self):
        model, ignored = read(".model Q1 NPN(BF=90 IKF=10m Ise=1f KF=1e-16 CJS=1p)")
        # KF (with AF) is the flicker noise of the noise limits: read, not listed
        assert ignored == ("IKF", "Ise", "CJS") and model.BF == 90.0 and model.KF == 1e-16
        # breakdown is kept (checked, stored) but not modelled: listed too
        model, ignored = read(".model DZ D(IS=1n BV=5.1 IBV=5m)")
        assert (model.BV, model.IBV, ignored) == (5.1, 5e-3, ("BV", "IBV"))
        assert read(".model M1 NMOS(LEVEL=1 CBD=10f NSUB=1e16)")[1] == ("CBD", "NSUB")


class TestRefusals:
    @pytest.mark.parametrize("card,column,words", [
        (".model D1 D(IS=-1f)", 13, "IS=-1e-15 is out of range: IS must be positive"),
        (".model D1 D(N=0)", 13, "N must be positive"),
        (".model D1 D(FC=1)", 13, "FC must lie in [0, 1)"),
        (".model D1 D(CJO=1p FC=-0.1)", 20, "FC must lie in [0, 1)"),
        (".model D1 D(CJ0=-2p)", 13, "CJ0 (read as CJO)=-2e-12 is out of range"),
        (".model D1 D(VJ=0)", 13, "VJ must be positive"),
        (".model D1 D(M=-0.5)", 13, "M must not be negative"),
        (".model D1 D(TT=-1n)", 13, "TT must not be negative"),
        (".model D1 D(RS=-3)", 13, "RS must not be negative"),
        (".model D1 D(TNOM=-300)", 13, "above absolute zero"),
        (".model Q1 NPN(BF=0)", 15, "BF must be positive"),
        (".model Q1 NPN(VA=-50)", 15, "VA (read as VAF)=-50"),
        (".model Q1 NPN(NF=0)", 15, "NF must be positive"),
        (".model M1 NMOS(W=0)", 16, "W must be positive"),
        (".model M1 NMOS(KP=10u L=-1u)", 23, "L must be positive"),
        (".model M1 NMOS(PHI=0)", 16, "PHI must be positive"),
        (".model M1 NMOS(LAMBDA=-0.1)", 16, "LAMBDA must not be negative"),
        (".model M1 NMOS(TOX=0)", 16, "TOX must be positive"),
        (".model J1 NJF(BETA=-1m)", 15, "BETA must be positive"),
        (".model J1 NJF(PB=0)", 15, "PB must be positive")])
    def test_impossible_values_name_the_parameter_and_its_place(self, card, column, words):
        err = refused(card)
        assert err.code == "netlist-132" and "netlist-132" in CODES
        assert words in err.message and err.message.startswith("model ")
        assert (err.span.line, err.span.column) == (2, column)

    def test_mos_level_other_than_1_is_refused(self):
        err = refused(".model M1 NMOS(KP=1m LEVEL=3)")
        assert err.code == "netlist-130" and "LEVEL=3" in err.message
        assert "level 1" in err.message and (err.span.line, err.span.column) == (2, 22)
        assert read(".model M1 NMOS(level=1)")[0] == MosModel()

    def test_a_type_without_equations_is_refused(self):
        for card in (".model MV VDMOS", ".model S1 SW", ".model R1 RES"):
            err = refused(card)
            assert err.code == "netlist-130" and "no device equations" in err.message

    def test_a_parameter_given_twice_is_refused(self):
        err = refused(".model Q1 NPN(VAF=50 BF=100 VA=60)")
        assert err.code == "netlist-130" and "VAF given twice" in err.message
        assert err.span.column == 29

    def test_instance_geometry(self):
        check_geometry(1e-6, 0.18e-6, None)       # accepted
        for w, l in ((0.0, 1e-6), (1e-6, -1e-6), (math.nan, 1e-6)):
            with pytest.raises(ElaborationError) as info:
                check_geometry(w, l, None)
            assert info.value.code == "netlist-132"

    def test_the_models_are_frozen(self):
        from dataclasses import FrozenInstanceError
        for model in (DiodeModel(), BjtModel(), MosModel(), JfetModel()):
            with pytest.raises(FrozenInstanceError):
                model.TNOM = 30.0
