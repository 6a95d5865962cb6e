"""Netlists shared by several test modules (values invented for the tests)."""

from __future__ import annotations

import math

#: a series RLC band-pass, output across R: f0 = 1/(2π√(LC)) ≈ 40.0 kHz, Q ≈ 11.8
L, C, R = 2.2e-3, 7.2e-9, 47.0
SERIES_RLC = f"""Quillmere test: series RLC band-pass
V1 in 0 AC 1
L1 in a {L!r}
C1 a out {C!r}
R1 out 0 {R!r}
"""


def butterworth_g(order: int) -> list[float]:
    """Butterworth low-pass prototype values g_k = 2 sin((2k - 1) pi / 2n), k = 1..n,
    equal terminations (Matthaei, Young & Jones 1964, §4.05, eq. 4.05-1; from memory)."""
    return [2 * math.sin((2 * k - 1) * math.pi / (2 * order)) for k in range(1, order + 1)]


def chebyshev_g(order: int, ripple_db: float) -> list[float]:
    """Chebyshev type I low-pass prototype element values g_1..g_n (g_0 = 1).

    Matthaei, Young & Jones, "Microwave Filters, Impedance-Matching Networks, and
    Coupling Structures" (1964), eq. 4.05-5; the same recursion in Williams & Taylor,
    "Electronic Filter Design Handbook" (from memory):

        beta  = ln(coth(L_Ar / 17.37))          (17.37 = 40 / ln 10, kept exact here)
        gamma = sinh(beta / 2n)
        a_k   = sin((2k - 1) pi / 2n),  b_k = gamma^2 + sin^2(k pi / n)
        g_1   = 2 a_1 / gamma,  g_k = 4 a_(k-1) a_k / (b_(k-1) g_(k-1))

    For odd n the load g_(n+1) = 1, so both terminations are equal.
    """
    beta = math.log(1.0 / math.tanh(ripple_db / (40.0 / math.log(10.0))))
    gamma = math.sinh(beta / (2 * order))
    a = [math.sin((2 * k - 1) * math.pi / (2 * order)) for k in range(1, order + 1)]
    b = [gamma ** 2 + math.sin(k * math.pi / order) ** 2 for k in range(1, order + 1)]
    g = [2 * a[0] / gamma]
    for k in range(2, order + 1):
        g.append(4 * a[k - 2] * a[k - 1] / (b[k - 2] * g[k - 2]))
    return g


def ladder_netlist(g: list[float], fc: float, r: float = 50.0,
                   title: str = "Quillmere Instruments ladder under test") -> tuple[str, str]:
    """Doubly terminated LC ladder from prototype values ``g``, shunt C first, with
    ``V1`` driving ``RS`` and ``RL`` as load: C_k = g_k/(R wc), L_k = g_k R/wc (impedance
    and frequency scaling). Returns the netlist and its output node."""
    wc = 2 * math.pi * fc
    lines = [title, "V1 in 0 AC 1", f"RS in n1 {r!r}"]
    node = 1
    for k, gk in enumerate(g, start=1):
        if k % 2:
            lines.append(f"C{k} n{node} 0 {gk / (r * wc)!r}")
        else:
            lines.append(f"L{k} n{node} n{node + 1} {gk * r / wc!r}")
            node += 1
    lines.append(f"RL n{node} 0 {r!r}")
    return "\n".join(lines) + "\n", f"n{node}"


def butterworth_ladder(order: int, fc: float, r: float = 50.0) -> tuple[str, str]:
    """Doubly terminated Butterworth LC ladder (see :func:`butterworth_g`)."""
    return ladder_netlist(butterworth_g(order), fc, r, "Quillmere Instruments Butterworth ladder")


def split_rc_chain(n: int) -> str:
    """V1 → n-1 resistors of 100 Ω in series → out, C1 = 100 nF from out to ground: an RC
    low-pass with n toleranced parts (corner 1/(2π·(n-1)·100 Ω·100 nF))."""
    lines = ["Quillmere test: RC low-pass with a split resistor", "V1 in 0 AC 1"]
    prev = "in"
    for i in range(n - 1):
        nxt = "out" if i == n - 2 else f"n{i + 1}"
        lines.append(f"R{i + 1} {prev} {nxt} 100")
        prev = nxt
    lines.append("C1 out 0 100n")
    return "\n".join(lines) + "\n"


def refused_at(text: str, where: str, words: str) -> None:
    """Assert that spec ``text`` is refused (SpecError) at key ``where``, the message
    holding ``words``."""
    import pytest

    from netcheck.exceptions import SpecError
    from netcheck.spec import parse_spec

    with pytest.raises(SpecError) as info:
        parse_spec(text, "s.toml")
    assert info.value.where == where and words in info.value.message, info.value.message


def write_spec(tmp_path, body: str, netlist: str, sweep=("100", "10k", 50)) -> str:
    """Write t.cir (``netlist``) and t.toml (source V1, output out, the sweep, then the
    tables of ``body``); the spec's path."""
    (tmp_path / "t.cir").write_text(netlist)
    path = tmp_path / "t.toml"
    path.write_text(f'netlist = "t.cir"\nsource = "V1"\noutput = "out"\n\n[sweep]\n'
                    f'start = "{sweep[0]}"\nstop = "{sweep[1]}"\npoints_per_decade = '
                    f"{sweep[2]}\n\n{body}")
    return str(path)
