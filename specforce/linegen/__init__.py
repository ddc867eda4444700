"""Line lists generated from published molecular constants (the built-in spectroscopy).

Modules: :mod:`specforce.linegen.linear` for linear molecules (CO2 today).
The generated lines are ordinary :class:`~specforce.linestore.LineList`\\ s in the
units of the 160-character record, so everything downstream treats them like
imported lines.
"""
