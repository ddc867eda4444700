"""Molecular line data: molecules and isotopologues, the gas registry, line lists in memory,
line parameters at layer conditions and the built-in line generators. Takes constants
tables and line stores; gives LineList and Spectroscopy objects.
"""
