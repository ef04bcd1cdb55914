"""Formatting results: figures, tables and the statistical appendix.

Only this package (and the command line) turns results objects into files.
"""
