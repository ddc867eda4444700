"""Bundled atmospheric profiles (installed as ``specforce.profiles``)."""
