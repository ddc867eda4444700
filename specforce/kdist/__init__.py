"""The calibrated fast mode: k-distribution tables that specforce builds from its own
line-by-line absorption, the transfer through them, and their error against line-by-line."""
