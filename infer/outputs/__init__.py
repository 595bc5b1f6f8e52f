"""Outputs: atomic file writing, the fit folder, summary tables, figures and the report bundle.

Figures take arrays or a posterior and return matplotlib figures; ``save_figure`` writes them.
"""
