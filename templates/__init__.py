"""Shipped workbook templates (data files only)."""
