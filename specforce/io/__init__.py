"""Files in and out: every file format specforce reads or writes, one module owning each. Takes
paths and the stages' objects; gives those objects read back, and files written atomically with provenance.

* :mod:`specforce.io.files`: the one atomic writer, output-path checks, leftovers of
  interrupted writes;
* :mod:`specforce.io.profiles`, :mod:`specforce.io.collection`: profile files (plain text,
  CSV, netCDF), the bundled profiles, many profiles in one netCDF file;
* :mod:`specforce.io.continuum_tables`: continuum tables;
* :mod:`specforce.io.linerecords` (with :mod:`specforce.io.linesources`), :mod:`specforce.io.linestore`,
  :mod:`specforce.io.lineimport`: 160-character line records, the HDF5 line store, importing;
* :mod:`specforce.io.results`, :mod:`specforce.io.batchfiles`, :mod:`specforce.io.plots`:
  results as netCDF (CF conventions), JSON and text, batch parts and outputs, figures;
* :mod:`specforce.io.ktables`: the fast mode's k-distribution tables and their cache.
"""
