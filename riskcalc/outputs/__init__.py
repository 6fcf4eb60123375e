"""Outputs: labels and formats, tidy tables, figures and the decision memo."""
