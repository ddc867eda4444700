"""Shared fixtures.

Real line lists live outside the project (see ``../shared/linedata-src/PROVENANCE.md``)
and are reached only through the SPECFORCE_TEST_LINES environment variable, which
``.ci/run`` sets. Tests that need them skip with a clear reason when it is unset.
"""

import os
import pathlib

import pytest

TESTS = pathlib.Path(__file__).parent


def _real_lines_dir():
    path = os.environ.get("SPECFORCE_TEST_LINES")
    if not path:
        pytest.skip(
            "real line lists not available: set SPECFORCE_TEST_LINES to the folder "
            "holding h2o_HITRAN.par, sample_CO2.par and sample_N2O.par (.ci/run sets it)"
        )
    p = pathlib.Path(path)
    if not p.is_dir():
        pytest.skip(f"SPECFORCE_TEST_LINES={path} is not a folder")
    return p


@pytest.fixture(scope="session")
def real_lines():
    """Folder of the real line lists (skips when SPECFORCE_TEST_LINES is unset)."""
    return _real_lines_dir()


@pytest.fixture(scope="session")
def reduced_unfitted():
    """Tables of the reduced fast-model layout without the fit to line-by-line: each g-point's
    plain mean cross-sections (specforce.kdist), for the built-in lines."""
    import dataclasses

    import specforce
    from specforce.kdist.build import build_tables
    from specforce.kdist.layout import REDUCED_LAYOUT
    from specforce.radiation.longwave import Settings

    layout = dataclasses.replace(REDUCED_LAYOUT, fit_pressures=())
    return build_tables(specforce.spectroscopy(), Settings(wavenumber_range=(500.0, 820.0)), layout)
