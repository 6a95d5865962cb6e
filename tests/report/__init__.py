"""Tests of the PDF compliance report (netcheck.report)."""
