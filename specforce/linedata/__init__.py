"""Bundled molecular-constants tables (installed as ``specforce.linedata``).

Only published constants live here, each with its source. No line list is
ever copied into this folder.
"""
