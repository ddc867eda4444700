"""Figures: written in the requested format, atomically, without switching the user's backend."""

import numpy as np
import pytest

from specforce.plots import plot_olr_spectrum, save_figure


def test_plots_keep_the_users_backend(tmp_path):
    # Regression (issue 16): plots called matplotlib.use("Agg"), which switched a notebook user's
    # backend. Writing a figure must leave the selected backend as it was.
    import matplotlib

    before = matplotlib.get_backend()
    nu = np.linspace(500.0, 600.0, 101)
    plot_olr_spectrum({"test": (nu, np.full(nu.size, 0.2))}, str(tmp_path / "s.svg"), "a flat spectrum")
    assert matplotlib.get_backend() == before
    assert (tmp_path / "s.svg").read_text().lstrip().startswith("<?xml")


def test_unsupported_suffix_is_refused(tmp_path):
    from matplotlib.figure import Figure

    from specforce.errors import OutputPathError

    with pytest.raises(OutputPathError, match="suffix must be one of"):
        save_figure(Figure(), tmp_path / "f.bmp")
    assert list(tmp_path.iterdir()) == []
