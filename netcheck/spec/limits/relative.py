"""Relative forms of limit keys shared by several kinds: a Q given as a nominal value
with a tolerance in percent, ppm or as a fraction, ``q = { nominal = 4, tolerance = "10%" }``."""

from __future__ import annotations

from ..reader import SpecReader

__all__ = ["q_bounds", "q_text", "Q_KEY"]

#: the description of the ``q`` key of the kinds that read it with :func:`q_bounds`
Q_KEY = ("[min, max] Q = f_center / bandwidth (or {min=, max=}; or {nominal=, tolerance=}, "
         "the tolerance '10%', '5000ppm' or a fraction 0.1)")


def q_bounds(rd: SpecReader, key: str = "q"
             ) -> tuple[tuple[float | None, float | None] | None, tuple[float, float] | None]:
    """The Q bounds of a table: ``[min, max]``, ``{min = .., max = ..}``, or ``{nominal =
    Q, tolerance = t}`` (t as '10%', '5000ppm' or a fraction 0.1) read as [Q(1 − t), Q(1 + t)].

    Returns ``(bounds or None, (nominal, fraction) or None)``.
    """
    raw = rd.raw(key)
    if not (isinstance(raw, dict) and ("nominal" in raw or "tolerance" in raw)):
        return rd.bounds(key, positive=True), None
    extra = sorted(set(raw) - {"nominal", "tolerance"})
    if extra:
        rd.fail(key, f"unknown key {extra[0]!r}: give {{min =, max =}} or {{nominal =, "
                     "tolerance =}", code="spec-282")
    if "nominal" not in raw:
        rd.fail(key, "tolerance needs nominal: {nominal = 4, tolerance = \"10%\"}",
                code="spec-282")
    if "tolerance" not in raw:
        rd.fail(key, "nominal needs tolerance: {nominal = 4, tolerance = \"10%\"}",
                code="spec-282")
    nominal = rd.number(key, value=raw["nominal"], label="nominal", positive=True)
    tol = rd.relative(key, raw["tolerance"])
    if not 0 < tol < 1:
        rd.fail(key, f"tolerance must lie between 0 and 1 (100%), got {raw['tolerance']!r}; "
                     "a plain number is a fraction of the nominal Q (0.1 is 10%)",
                code="spec-282")
    return (nominal * (1 - tol), nominal * (1 + tol)), (nominal, tol)


def q_text(nominal: tuple[float, float] | None) -> str:
    """``; nominal Q 4 ± 10%`` for a definition, or nothing."""
    if nominal is None:
        return ""
    q, t = nominal
    return f"; nominal Q {q:.6g} ± {t * 100:.4g}%"
