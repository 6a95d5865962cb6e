"""Lark grammars for netlists and expressions, shipped as package data."""
