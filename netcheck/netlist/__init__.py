"""Netlist text → Circuit: source spans, units, parsing, expressions, element kinds,
elaboration (parameters, subcircuits, includes) and topology checks.

The stage's public surface is :func:`load_netlist` (text → parse tree with spans) and
:func:`elaborate` (→ :class:`Circuit`); the convenience ``read_netlist(...).ac(...)``
lives in the package root, above the stages.
"""
