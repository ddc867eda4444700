"""Radiation: profiles and their checks, humidity, the layered column, Schwarzschild transfer and
the longwave driver. Takes a profile, spectroscopy and settings; gives fluxes and spectra.
"""
