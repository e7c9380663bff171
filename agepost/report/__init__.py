"""Presentation of summaries: JSON-ready records, CSV and LaTeX tables, figures, HTML report."""
