"""Figures: made from results and returned unsaved, written in the requested format, atomically, without
switching the user's backend."""

import numpy as np
import pytest
import xarray as xr

from specforce.io.plots import plot_comparison, plot_olr_spectrum, plot_sweep, save_figure


def _longwave(nu, flux, name="flat"):
    """A longwave result holding only an OLR spectrum (what the spectrum plot draws)."""
    from specforce.radiation.longwave import LongwaveResult, Settings

    levels = np.array([1e5, 1e3])
    return LongwaveResult(wavenumber=nu, olr_spectrum=flux, surface_down_spectrum=flux, level_spectra_up={},
                          level_spectra_down={}, flux_up=np.zeros(2), flux_down=np.zeros(2),
                          heating_rate=np.zeros(1), pressure=levels,
                          provenance={"profile": name, "settings": Settings(wavenumber_range=(nu[0], nu[-1]))})


def _sweep(refit=True):
    """A whole-range CO2 sweep of two profiles (invented forcings), with its refits."""
    import dataclasses

    from specforce.forcing.sweep import SweepResult, refit_sweep, sweep_values
    from specforce.radiation.longwave import Settings

    conc = sweep_values("CO2", 139.0, 1112.0, 4)
    f = 5.35 * np.log(conc / 278.0) * np.array([[1.0], [0.9]])
    s = SweepResult("CO2", "ppm", conc, 278.0, {"CO2": 278.0, "CH4": 722.0, "N2O": 270.0}, ["mls", "saw"],
                    np.array([0.75, 0.25]), f, f, None, np.array([2.2e4, 3.0e4]), {"settings": Settings()})
    return dataclasses.replace(s, refits=refit_sweep(s)) if refit else s


def _comparison(resolution=5.0):
    from specforce.forcing.compare import compare_spectra

    nu = np.arange(600.05, 740.0, 0.1)
    a = xr.Dataset({"olr_spectrum": ("wavenumber", np.full(nu.size, 0.2))}, coords={"wavenumber": nu},
                   attrs={"label": "flat"})
    b = xr.Dataset({"olr_spectrum": ("wavenumber", 0.2 - 0.05 * np.exp(-((nu - 667.0) / 20.0) ** 2))},
                   coords={"wavenumber": nu}, attrs={"label": "dip"})
    return compare_spectra(a, b, resolution=resolution)


def test_plots_keep_the_users_backend(tmp_path):
    # Required: writing a figure leaves the user's selected matplotlib backend as it was (a notebook's
    # backend must not be switched to Agg).
    import matplotlib

    before = matplotlib.get_backend()
    nu = np.linspace(500.0, 600.0, 101)
    save_figure(plot_olr_spectrum(_longwave(nu, np.full(nu.size, 0.2)), "a flat spectrum"), str(tmp_path / "s.svg"))
    assert matplotlib.get_backend() == before
    assert (tmp_path / "s.svg").read_text().lstrip().startswith("<?xml")


def test_unsupported_suffix_is_refused(tmp_path):
    from matplotlib.figure import Figure

    from specforce.errors import OutputPathError

    with pytest.raises(OutputPathError, match="suffix must be one of"):
        save_figure(Figure(), tmp_path / "f.bmp")
    assert list(tmp_path.iterdir()) == []


def test_each_plot_takes_its_result_and_returns_the_figure_unsaved(tmp_path, monkeypatch):
    # A notebook user restyles the figure before saving it, or never saves it: the plot functions
    # take the result and return its Figure, writing nothing (the command line saves it).
    from matplotlib.figure import Figure

    monkeypatch.chdir(tmp_path)
    nu = np.linspace(600.05, 739.95, 1400)
    sweep = _sweep()
    figures = {
        "olr": plot_olr_spectrum(_longwave(nu, np.full(nu.size, 0.2), "mls")),
        "olr several": plot_olr_spectrum({"a": _longwave(nu, np.full(nu.size, 0.2)),
                                          "b": _longwave(nu, np.full(nu.size, 0.1))}),
        "sweep": plot_sweep(sweep),
        "comparison": plot_comparison(_comparison()),
    }
    for name, fig in figures.items():
        assert isinstance(fig, Figure), name
    assert list(tmp_path.iterdir()) == []
    # default titles name what is drawn
    assert figures["olr"].axes[0].get_title() == "OLR spectrum, profile mls"
    assert [line.get_label() for line in figures["olr several"].axes[0].get_lines()][:2] == ["a", "b"]
    assert figures["sweep"].axes[0].get_title().startswith("CO2 sweep, mls, saw\n")
    assert figures["comparison"].axes[0].get_title().startswith("OLR: dip minus flat\n")


def test_sweep_plot_draws_its_refit_and_the_formulas():
    labels = [line.get_label() for line in plot_sweep(_sweep()).axes[0].get_lines()]
    assert any(label.startswith("refit: alpha=") for label in labels)
    assert "myhre1998" in labels and "specforce weighted mean" in labels
    labels = [line.get_label() for line in plot_sweep(_sweep(refit=False), "no refit").axes[0].get_lines()]
    assert not any(label.startswith("refit") for label in labels)


def test_comparison_plot_draws_the_smoothed_difference_and_band_sums():
    c = _comparison(resolution=5.0)
    fig = plot_comparison(c, "dip")
    lower = fig.axes[1]
    (line,) = lower.get_lines()[:1]
    assert "averaged over 5 cm$^{-1}$" in line.get_label()
    assert line.get_xdata().size == c.to_dataset()["wavenumber_smoothed"].size
    texts = [t.get_text() for t in lower.texts]
    assert len(texts) == len(c.bands) and texts[0].startswith(c.bands[0][0] + "\n")
    raw = plot_comparison(_comparison(resolution=None)).axes[1].get_lines()[0]
    assert raw.get_label() == "B - A" and raw.get_xdata().size == c.wavenumber.size


def _render(fig):
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    return canvas.get_renderer()


@pytest.mark.parametrize("lo, hi", [(10.0, 3000.0), (2000.0, 3000.0), (600.0, 620.0)])
def test_blackbody_labels_do_not_overlap(lo, hi):
    # The labels of the blackbody curves were all printed at the right edge, where in the far wing the
    # curves (and so the labels) lie on top of each other. Their boxes, as drawn, must be apart and
    # inside the axes, whatever the range.
    nu = np.linspace(lo, hi, 2001)
    fig = plot_olr_spectrum(_longwave(nu, np.full(nu.size, 0.05)), "labels")
    renderer = _render(fig)
    ax = fig.axes[0]
    labels = [t for t in ax.texts if t.get_text().strip().endswith(" K")]
    assert sorted(t.get_text().strip() for t in labels) == ["200 K", "225 K", "250 K", "275 K", "300 K"]
    boxes = [t.get_window_extent(renderer) for t in labels]
    for i, a in enumerate(boxes):
        assert ax.bbox.contains(a.x0, a.y0) and ax.bbox.contains(a.x1, a.y1), labels[i].get_text()
        for b in boxes[i + 1:]:
            assert not a.overlaps(b), (a, b)


def test_forcing_plot_shows_the_base_spectrum_under_the_perturbed_one():
    # Both spectra were drawn alike, the perturbed one last, so that it hid the base wherever the change
    # is small. The base is now wider and drawn below, the perturbed line thinner on top, in another
    # colour: the base shows on both sides of it (spectra and heating rates alike).
    import specforce
    from specforce.io.plots import plot_forcing

    r = specforce.radiative_forcing("mls", {"CO2": "2x"}, wavenumber_range=(640.0, 700.0), gases=("CO2",),
                                    continuum=False)
    fig = plot_forcing(r)
    assert fig._suptitle.get_text() == f"Clear-sky longwave forcing, {r.name}"
    _render(fig)
    for ax in (fig.axes[0], fig.axes[2]):
        lines = {line.get_label(): line for line in ax.get_lines()}
        base, pert = lines["base"], lines["perturbed"]
        assert base.get_linewidth() >= 2 * pert.get_linewidth()
        assert pert.get_zorder() > base.get_zorder() and base.get_color() != pert.get_color()
        assert base.get_alpha() is not None and base.get_alpha() < 1
