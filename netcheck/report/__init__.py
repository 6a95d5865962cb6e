"""The PDF compliance report (jinja2 + weasyprint + matplotlib, imported lazily)."""
