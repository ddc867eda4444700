"""Absorption: line shapes and line treatments, the line sums and their kernels, continua and
spectral grids. Takes lines and a layer's state; gives optical depth on a wavenumber grid.
"""
