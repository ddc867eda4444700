"""Forcing: the change grammar and scenarios, instantaneous and adjusted forcing, responses,
sweeps, formulas and refits, comparisons, convergence. Takes profiles and changes; gives results.
"""
