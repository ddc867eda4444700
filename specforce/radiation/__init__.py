"""Radiation: profiles and their checks, layers, humidity, the column, Schwarzschild transfer and
the longwave driver. Takes a profile, spectroscopy and settings; gives fluxes and spectra.
"""
