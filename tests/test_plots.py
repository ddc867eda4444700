"""Figures: written in the requested format, atomically, without switching the user's backend."""

import numpy as np
import pytest

from specforce.io.plots import plot_olr_spectrum, save_figure


def test_plots_keep_the_users_backend(tmp_path):
    # Required: writing a figure leaves the user's selected matplotlib backend as it was (a notebook's
    # backend must not be switched to Agg).
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


def _render(fig):
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    return canvas.get_renderer()


@pytest.mark.parametrize("lo, hi", [(10.0, 3000.0), (2000.0, 3000.0), (600.0, 620.0)])
def test_blackbody_labels_do_not_overlap(tmp_path, lo, hi):
    # The labels of the blackbody curves were all printed at the right edge, where in the far wing the
    # curves (and so the labels) lie on top of each other. Their boxes, as drawn, must be apart and
    # inside the axes, whatever the range.
    nu = np.linspace(lo, hi, 2001)
    fig = plot_olr_spectrum({"flat": (nu, np.full(nu.size, 0.05))}, str(tmp_path / "s.png"), "labels")
    renderer = _render(fig)
    ax = fig.axes[0]
    labels = [t for t in ax.texts if t.get_text().strip().endswith(" K")]
    assert sorted(t.get_text().strip() for t in labels) == ["200 K", "225 K", "250 K", "275 K", "300 K"]
    boxes = [t.get_window_extent(renderer) for t in labels]
    for i, a in enumerate(boxes):
        assert ax.bbox.contains(a.x0, a.y0) and ax.bbox.contains(a.x1, a.y1), labels[i].get_text()
        for b in boxes[i + 1:]:
            assert not a.overlaps(b), (a, b)


def test_forcing_plot_shows_the_base_spectrum_under_the_perturbed_one(tmp_path):
    # Both spectra were drawn alike, the perturbed one last, so that it hid the base wherever the change
    # is small. The base is now wider and drawn below, the perturbed line thinner on top, in another
    # colour: the base shows on both sides of it (spectra and heating rates alike).
    import specforce
    from specforce.io.plots import plot_forcing

    r = specforce.radiative_forcing("mls", {"CO2": "2x"}, wavenumber_range=(640.0, 700.0), gases=("CO2",),
                                    continuum=False)
    fig = plot_forcing(r, str(tmp_path / "f.png"), "both spectra")
    _render(fig)
    for ax in (fig.axes[0], fig.axes[2]):
        lines = {line.get_label(): line for line in ax.get_lines()}
        base, pert = lines["base"], lines["perturbed"]
        assert base.get_linewidth() >= 2 * pert.get_linewidth()
        assert pert.get_zorder() > base.get_zorder() and base.get_color() != pert.get_color()
        assert base.get_alpha() is not None and base.get_alpha() < 1
