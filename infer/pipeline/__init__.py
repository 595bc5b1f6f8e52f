"""Pipeline: one fit end to end (catalog -> chain -> outputs), and many regions as a survey.

The commands in :mod:`infer.commands` and the public API call these.
"""
