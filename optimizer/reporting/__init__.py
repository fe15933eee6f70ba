"""Reporting layer: HTML documents, figures and CSV/XLSX/JSON exports."""
