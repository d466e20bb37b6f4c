"""Exporters: tables, coordinates, figures, thermodynamic fits (only format results)."""
