"""Every file specforce reads or writes, except line stores (:mod:`specforce.io.linestore`).

* :mod:`specforce.io.files`: the one atomic writer, output-path checks, leftovers of
  interrupted writes;
* :mod:`specforce.io.profiles`: profile files (plain text, CSV, netCDF) and the
  bundled profiles;
* :mod:`specforce.io.results`: results as netCDF (CF conventions) and JSON, and
  reading saved results back.
"""
