"""The fused kernels against the numpy formulas they replace: a layer's line parameters in one pass
(specforce.absorption._params_kernel), the radiation term at the points, and the far-wing
impulses and spectra of the tiered sum (specforce.absorption._interp_kernels)."""

import math

import numpy as np
import pytest
import scipy.fft

from specforce.absorption import _interp_kernels as ik
from specforce.absorption import _params_kernel as pk
from specforce.absorption.lineshapes import radiation_term
from specforce.absorption.linesum import LayerState, layer_lines
from specforce.molecular.lineparams import doppler_halfwidth, intensity_at, lorentz_halfwidth, shifted_wavenumber
from specforce.molecular.lines import LineList
from specforce.molecular.molecules import isotopologue


def _lines(n=400, seed=3):
    """Invented lines (not real transitions) of three isotopologues of two molecules, from 1 to
    3000 cm-1 (the far infrared, where the radiation term's tanh loses digits, included), with
    float32 widths as in a line store and some lower-state energies at the placeholder -1."""
    rng = np.random.default_rng(seed)
    mol = rng.choice([1, 2], n).astype(np.uint8)
    iso = np.where(mol == 2, rng.choice([1, 2], n), 1).astype(np.uint8)
    energy = rng.uniform(0, 3000, n)
    energy[rng.random(n) < 0.05] = -1.0
    cols = {"molecule": mol, "isotopologue": iso,
            "wavenumber": np.sort(np.concatenate((rng.uniform(1.0, 30.0, n // 4),
                                                  rng.uniform(30.0, 3000.0, n - n // 4)))),
            "intensity": 10 ** rng.uniform(-26, -18, n), "lower_energy": energy,
            "gamma_air": rng.uniform(0.02, 0.1, n).astype(np.float32),
            "gamma_self": rng.uniform(0.1, 0.5, n).astype(np.float32),
            "n_air": rng.uniform(0.5, 0.8, n).astype(np.float32), "delta_air": rng.uniform(-0.01, 0.005, n)}
    return LineList(cols)


@pytest.mark.parametrize("temperature", [180.0, 296.0, 320.0])
def test_layer_line_parameters_equal_the_numpy_formulas(temperature):
    # Rothman et al. (1998) Eqs. A4, A11-A13 as specforce.molecular.lineparams writes them in numpy,
    # and the radiation term nu tanh(c2 nu / 2T): the kernel must give them to 1e-13 relative
    # (its exp is within 2e-15; 1 - exp(-x) below x = 0.1 is a series).
    lines = _lines()
    p, pp = 60000.0, np.where(lines.molecule == 2, 24.0, 600.0)
    column = np.where(lines.molecule == 2, 3e21, 5e22)
    ll = layer_lines(lines, LayerState(p, temperature), column, partial_pressure=pp)
    wn = lines.wavenumber
    mass = np.array([isotopologue(int(m), int(i)).molar_mass for m, i in zip(lines.molecule, lines.isotopologue)])
    gamma = lorentz_halfwidth(lines.gamma_air.astype(float), lines.gamma_self.astype(float), lines.n_air.astype(float),
                              p, temperature, pp)
    s = intensity_at(lines.columns, temperature) / radiation_term(wn, temperature)
    centre = shifted_wavenumber(wn, lines.delta_air, p)
    alpha = doppler_halfwidth(wn, temperature, mass)
    peak = np.minimum(math.sqrt(math.log(2) / math.pi) / alpha, 1 / (math.pi * gamma))
    order = np.argsort(ll.ident)
    for name, ref in (("centre", centre), ("strength", s * column), ("doppler_hwhm", alpha), ("lorentz_hwhm", gamma),
                      ("peak_optical_depth", s * radiation_term(centre, temperature) * peak * column)):
        np.testing.assert_allclose(getattr(ll, name)[order], ref, rtol=1e-13, atol=0, err_msg=name)
    assert ll.lorentz_hwhm.dtype == np.float64  # widths computed in double precision from float32 columns
    without = layer_lines(lines, LayerState(p, temperature), column, partial_pressure=pp, radiation_term=False)
    np.testing.assert_allclose(without.strength[np.argsort(without.ident)], intensity_at(lines.columns, temperature)
                               * column, rtol=1e-13, atol=0)


def test_a_single_partial_pressure_is_the_state_s():
    lines = _lines(50)
    state = LayerState(30000.0, 250.0, 12.0)
    a = layer_lines(lines, state, 1e21)
    b = layer_lines(lines, LayerState(30000.0, 250.0), 1e21, partial_pressure=np.full(len(lines), 12.0))
    np.testing.assert_array_equal(a.lorentz_hwhm, b.lorentz_hwhm)
    ref = lorentz_halfwidth(lines.gamma_air.astype(float), lines.gamma_self.astype(float), lines.n_air.astype(float),
                            30000.0, 250.0, 12.0)
    np.testing.assert_allclose(a.lorentz_hwhm[np.argsort(a.ident)], ref, rtol=1e-13)


def test_lines_that_the_pressure_shift_reorders_come_out_sorted_by_centre():
    # Invented lines: the second lies 0.005 cm-1 above the first, which shifts by +0.01 cm-1 per atm;
    # at 1 atm their centres swap, at 0.1 atm they do not. The kernel reports the order it found.
    cols = {"molecule": np.full(3, 2, np.uint8), "isotopologue": np.ones(3, np.uint8),
            "wavenumber": np.array([1000.0, 1000.005, 1001.0]), "intensity": np.full(3, 1e-20),
            "lower_energy": np.zeros(3), "gamma_air": np.full(3, 0.07, np.float32),
            "gamma_self": np.full(3, 0.09, np.float32), "n_air": np.full(3, 0.7, np.float32),
            "delta_air": np.array([0.01, 0.0, 0.0])}
    lines = LineList(cols)
    swapped = layer_lines(lines, LayerState(101325.0, 280.0))
    assert swapped.ident.tolist() == [1, 0, 2]
    assert np.all(np.diff(swapped.centre) > 0)
    np.testing.assert_allclose(swapped.centre, [1000.005, 1000.01, 1001.0], rtol=1e-15)
    kept = layer_lines(lines, LayerState(10132.5, 280.0))  # in order (a stable sort would keep it too)
    assert kept.ident.tolist() == [0, 1, 2]


@pytest.mark.parametrize("on", [True, False])
def test_clip_times_radiation_term(on):
    x = np.concatenate((np.linspace(0.5, 30.0, 300), np.linspace(30.0, 3000.0, 3000)))
    values = np.random.default_rng(5).normal(1.0, 1.0, x.size)
    out = values.copy()
    pk.clip_times_radiation_term(out, x, 215.0, on)
    ref = np.maximum(values, 0.0) * (radiation_term(x, 215.0) if on else 1.0)
    np.testing.assert_allclose(out, ref, rtol=1e-13, atol=0)
    assert np.all(out[values < 0] == 0.0)


@pytest.mark.parametrize("span", [(700.0, 705.0), (600.0, 760.0)])
def test_far_field_on_the_points_part_alone_equals_the_whole(span):
    # The fine far field of a zone is kept within _FAR_MARGIN steps of its points only, which lets its
    # transform be shorter; on that part it must equal the whole grid's values (wrap-around of the
    # circular convolution kept out), to rounding. Invented lines (not real transitions): CO2-like
    # with the chi factor, 250 cm-1 cut-off, and 25 cm-1 lines with pedestals, some smooth.
    from specforce.absorption import _tiered as td
    from specforce.absorption.treatments import ChiPerrinHartmann, LineTreatment

    rng = np.random.default_rng(12)
    n = 3000
    centre = np.sort(rng.uniform(550.0, 810.0, n))
    strength, alpha, gamma = 10 ** rng.uniform(-22, -18, n), rng.uniform(5e-4, 1e-3, n), rng.uniform(1e-3, 0.08, n)
    treatments = (LineTreatment(25.0, 1.0, True), LineTreatment(250.0, 1.0, False,
                                                                ChiPerrinHartmann().at_temperature(230.0)))
    treatment = rng.integers(0, 2, n)
    sub = np.where(treatment == 0, 1e-3 * strength, 0.0)
    exact = rng.random(n) < 0.8
    used = [0, 1]
    groups = td._groups(used, {t: treatment == t for t in used}, treatments, 25.0)
    lines = (centre, strength, alpha, gamma, sub)
    x0, x1 = span
    step, radius = 0.02, 0.48
    whole = td._far_field(x0, x1, 25.0, step, radius, groups, lines, exact, outer=25.0)
    part = td._far_field(x0, x1, 25.0, step, radius, groups, lines, exact, outer=25.0, only=td._FAR_MARGIN)
    k0 = round((part[0] - whole[0]) / step)
    assert abs(part[0] - (whole[0] + k0 * step)) < 1e-9 * step
    assert part[0] <= x0 - td._FAR_MARGIN * step and part[0] + (part[1] - 1) * step >= x1 + td._FAR_MARGIN * step
    assert part[1] < whole[1]
    ref = whole[2][k0:k0 + part[1]]
    # the two transforms differ in length and round differently: 1e-12 of the largest value is
    # about ten thousand times double precision's rounding, far below any physical difference
    np.testing.assert_allclose(part[2], ref, rtol=0, atol=1e-12 * np.abs(ref).max())
    assert np.abs(ref).max() > 0


def test_far_wing_impulses_and_spectra_equal_the_numpy_sums():
    # spread6_series and spread6_near spread the asymptotic series' three terms and the smooth
    # lines' near parts with spread6's weights; spectrum_times_kernel adds the rows' products in order.
    rng = np.random.default_rng(11)
    n, size = 300, 4000
    pos = np.sort(rng.uniform(3.0, size - 4.0, n))
    s, al, ga = 10 ** rng.uniform(-3, 0, n), rng.uniform(1e-4, 1e-2, n), rng.uniform(1e-4, 5e-2, n)
    sub = rng.uniform(0, 1e-3, n)
    mask = rng.random(n) < 0.7
    var = al * al / (2 * math.log(2))
    c2 = s * ga / math.pi
    coef = (c2, c2 * (3 * var - ga * ga), c2 * (ga**4 - 10 * ga * ga * var + 15 * var * var))
    rows = np.zeros((3, size))
    ik.spread6_series(pos, s, al, ga, mask, rows[0], rows[1], rows[2])
    for row, cf in zip(rows, coef):
        ref = np.zeros(size)
        ik.spread6(pos[mask], cf[mask], ref)
        np.testing.assert_allclose(row, ref, rtol=1e-13, atol=1e-13 * np.abs(ref).max())
    j2, j4, j6, area = 3.1, 2.2, 1.7, 0.4
    near = np.zeros(size)
    ik.spread6_near(pos, s, al, ga, sub, mask, j2, j4, j6, area, near)
    keep = ~mask
    g, v = ga[keep], var[keep]
    value = s[keep] * (1 - g / math.pi * (j2 + (3 * v - g * g) * j4 + (g**4 - 10 * g * g * v + 15 * v * v) * j6)
                       - sub[keep] * area)
    ref = np.zeros(size)
    ik.spread6(pos[keep], value, ref)
    np.testing.assert_allclose(near, ref, rtol=1e-13, atol=1e-13 * np.abs(ref).max())
    spectra = scipy.fft.rfft(np.vstack((rows, near)), axis=-1)
    kernels = tuple(rng.normal(size=spectra.shape[1]) for _ in range(4))
    total = np.empty(spectra.shape[1], complex)
    for r in range(4):
        ik.spectrum_times_kernel(spectra[r], kernels[r], total, r > 0)
    ref = spectra[0] * kernels[0] + spectra[1] * kernels[1] + spectra[2] * kernels[2] + spectra[3] * kernels[3]
    np.testing.assert_allclose(total, ref, rtol=1e-14, atol=1e-14 * np.abs(ref).max())


@pytest.mark.parametrize("npts", [1, 255, 256, 257, 1000])
def test_interp_add_is_the_quintic_lagrange_interpolant(npts):
    # The 6-point Lagrange interpolant (Abramowitz & Stegun 1964, Eq. 25.2.2) at the points, in blocks
    # of 256 points (point counts on both sides of a block); numpy's product formula as reference,
    # and a polynomial of degree 5, which it reproduces (to rounding)
    rng = np.random.default_rng(npts)
    start, h, size = 3.5, 0.02, 400
    src = rng.normal(size=size)
    x = np.sort(rng.uniform(start + 2 * h, start + (size - 4) * h, npts))
    out = rng.normal(size=npts)
    got = out.copy()
    ik.interp_add(start, h, src, x, got)
    pos = (x - start) * (1.0 / h)
    m = np.floor(pos).astype(int)
    nodes = np.arange(-2, 4)
    t = (pos - m)[:, None]
    weights = np.ones((npts, 6))
    for i in range(6):
        for j in range(6):
            if j != i:
                weights[:, i] *= (t[:, 0] - nodes[j]) / (nodes[i] - nodes[j])
    ref = out + (weights * src[m[:, None] + nodes]).sum(axis=1)
    # the kernel forms the weights from prefix and suffix products, the reference term by term: both
    # round the same products differently, by a few units in the last place of values of order 1
    np.testing.assert_allclose(got, ref, rtol=1e-13, atol=1e-13)
    poly = np.polynomial.Polynomial([0.3, -1.2, 0.5, 0.8, -0.4, 0.9])
    u = start + h * np.arange(size)
    exact = np.zeros(npts)
    ik.interp_add(start, h, poly((u - 6.0) / 2.0), x, exact)
    # exact in exact arithmetic; the samples reach about 100, and six weights up to about 1.5 times
    # them cancel to the value, so rounding is a few times 1e-14 of 100: within 1e-10 relative
    np.testing.assert_allclose(exact, poly((x - 6.0) / 2.0), rtol=1e-10, atol=1e-12)


def test_bin_averages_equal_the_interval_rule_summed_with_numpy():
    # SpectralGrid.bin_averages sums the interval rule per bin in one kernel; the numpy form it
    # replaces: sum_k coef[k] v[min(start + k, last)], then np.add.reduceat over the bins.
    from specforce.absorption.grids import SignificantLines, graded_grid

    found = SignificantLines()
    lines = layer_lines(_lines(60), LayerState(20000.0, 230.0), 1e20)
    found.add([lines], 0.0)
    grid = graded_grid(found, (500.0, 520.0), 0.1, 0.25, 0.2, 0.05)
    with np.errstate(divide="ignore", invalid="ignore"):  # interval_rule's unused stencils in short bins
        start, coef = grid.interval_rule()
    v = np.random.default_rng(2).normal(size=(3, len(grid)))
    last = v.shape[-1] - 1
    per_interval = sum(coef[k] * v[..., np.minimum(start + k, last)] for k in range(4))
    ref = np.add.reduceat(per_interval, grid.edge_index[:-1], axis=-1) / np.diff(grid.edges)
    np.testing.assert_allclose(grid.bin_averages(v), ref, rtol=1e-13, atol=1e-15)
    np.testing.assert_allclose(grid.bin_averages(v[1]), ref[1], rtol=1e-13, atol=1e-15)


def test_search_from_a_start_equals_searchsorted():
    from specforce.absorption._tier_kernels import _search_from

    rng = np.random.default_rng(4)
    x = np.sort(np.round(rng.uniform(0, 10, 500), 1))  # with repeated values
    for v in np.concatenate((rng.uniform(-1, 11, 300), x[::7])):
        for right in (False, True):
            want = int(np.searchsorted(x, v, side="right" if right else "left"))
            for start in {0, want // 2, want}:
                assert _search_from(x, v, start, right) == want


def test_first_invalid_optical_depth_equals_the_numpy_search():
    # One pass over the optical depths (specforce.radiation._depth_check.first_invalid) in place of
    # numpy's masks: the first negative or non-finite value, layer by layer, within the points asked
    # for, and (-1, -1) where there is none; the checks that use it name that value's layer and point.
    from specforce.errors import InternalError, SettingsError
    from specforce.radiation.bounds import _check_optical_depth
    from specforce.radiation._depth_check import first_invalid as first_invalid_depth
    from specforce.radiation.transfer import spectral_fluxes

    rng = np.random.default_rng(8)
    tau = rng.uniform(0.0, 5.0, (7, 3000))
    assert first_invalid_depth(tau, 0, 3000) == (-1, -1)
    for flat, bad in ((0, np.nan), (4095, -1e-300), (4096, np.inf), (20999, -np.inf), (12345, np.nan)):
        t = tau.copy()
        t.reshape(-1)[flat] = bad
        t.reshape(-1)[flat + 1:][::977] = -1.0  # later bad values do not count
        want = int(np.flatnonzero(~np.isfinite(t.reshape(-1)) | (t.reshape(-1) < 0))[0])
        assert want == flat
        layer, point = divmod(flat, 3000)
        assert first_invalid_depth(t, 0, 3000) == (layer, point)
        assert first_invalid_depth(t, point, point + 1) == (layer, point)
        with pytest.raises(InternalError, match=f"in layer {layer} at {point}.0000 cm-1"):
            _check_optical_depth(t, np.arange(3000.0), type("P", (), {"name": "test"})())
        with pytest.raises(SettingsError, match=f"finite and non-negative: .* in layer {layer} at point {point} "):
            spectral_fluxes(np.arange(1.0, 3001.0), t, np.full(8, 250.0), 280.0)
    t = tau.copy()
    t[3, 2500] = -1.0
    assert first_invalid_depth(t, 0, 2500) == (-1, -1)
    assert first_invalid_depth(t, 2000, 3000) == (3, 2500)
