"""Absorption: the fast methods against the direct sum, line treatments against a plain-numpy reference,
smooth lines, and a homogeneous-path check."""

import math

import numpy as np
import pytest
from scipy.special import i0e, i1e, voigt_profile

from specforce.absorption.lineshapes import chi_parameters_co2, voigt_profile as voigt_of_specforce
from specforce.absorption.linesum import (
    LayerLines,
    LayerState,
    cross_section,
    layer_lines,
    optical_depth,
)
from specforce.absorption.treatments import (
    ChiPerrinHartmann,
    FarWing,
    LineTreatment,
    SubLorentzianWater,
    treatment_table,
)
from specforce.errors import SettingsError
from specforce.absorption.grids import uniform_grid, uniform_spacing
from specforce.io.lineimport import import_lines
from specforce.io.linestore import open_store
from specforce.molecular.lines import LineList
from specforce.molecular.molecules import molecule_id


def synthetic_lines(n, lo, hi, seed=0, molecule=1):
    """Invented lines with realistic ranges of parameters (not real transitions)."""
    rng = np.random.default_rng(seed)
    cols = {
        "molecule": np.full(n, molecule, np.uint8),
        "isotopologue": np.ones(n, np.uint8),
        "wavenumber": np.sort(rng.uniform(lo, hi, n)),
        "intensity": 10 ** rng.uniform(-24, -19, n),
        "lower_energy": rng.uniform(0, 2000, n),
        "gamma_air": rng.uniform(0.02, 0.1, n),
        "gamma_self": rng.uniform(0.1, 0.5, n),
        "n_air": rng.uniform(0.5, 0.8, n),
        "delta_air": rng.uniform(-0.01, 0.005, n),
    }
    return LineList(cols)


def treat(lines, default=LineTreatment(), radiation_term=True, **by_molecule):
    """Keyword arguments of layer_lines: ``default`` for every line, and ``by_molecule`` (e.g.
    CO2=LineTreatment(...)) for the lines of that molecule."""
    treatments, index = [default], np.zeros(len(lines), np.int64)
    for name, t in by_molecule.items():
        treatments.append(t)
        index[lines.molecule == molecule_id(name)] = len(treatments) - 1
    return {"treatments": tuple(treatments), "treatment": index, "radiation_term": radiation_term}


def _points(lines, lo, hi, state, kind):
    """A uniform grid at a quarter of the narrowest half-width, or as many sorted random points."""
    h = uniform_spacing([layer_lines(lines, state)], lo, hi, fraction=0.25, resolve_tau=0.0, max_spacing=np.inf)
    grid = uniform_grid(lo, hi, h)
    if kind == "uniform":
        return grid
    return np.sort(np.random.default_rng(7).uniform(lo, hi, grid.size))


def _worst(lines, lo, hi, state, column, method, shape=None, kind="uniform"):
    """Largest relative difference from the direct sum where 1e-3 < tau < 10 (``shape``: the
    keyword arguments of layer_lines, see :func:`treat`)."""
    x = _points(lines, lo, hi, state, kind)
    ll = layer_lines(lines, state, column, **(shape or {}))
    direct = optical_depth(ll, x, method="direct")
    fast = optical_depth(ll, x, method=method)
    window = (direct > 1e-3) & (direct < 10)
    assert window.sum() > 100, "test set-up gives too few points with 1e-3 < tau < 10"
    return np.max(np.abs(fast - direct)[window] / direct[window])


@pytest.mark.parametrize("kind", ["uniform", "random"])
@pytest.mark.parametrize("pressure,temperature", [(95000.0, 290.0), (20000.0, 220.0), (300.0, 240.0), (5.0, 230.0)])
def test_tiered_matches_direct_on_synthetic_lines(pressure, temperature, kind):
    # Required: within 0.1 % wherever a layer's optical depth is between 1e-3 and 10.
    # The tiered method reaches about 2.5e-4 (its window transitions and the 6-point interpolation,
    # see specforce.absorption._tiered); the bound leaves a factor 4 of margin. Random points check that it
    # needs no uniform grid.
    lines = synthetic_lines(400, 480, 620)
    state = LayerState(pressure, temperature, 0.01 * pressure)
    assert _worst(lines, 500, 600, state, 2e21 * pressure / 1e5, "tiered", kind=kind) < 1e-3


@pytest.mark.parametrize("pressure,temperature", [(95000.0, 290.0), (300.0, 240.0)])
def test_multigrid_matches_direct_on_synthetic_lines(pressure, temperature):
    # The uniform reference path's method: same 0.1 % requirement.
    lines = synthetic_lines(400, 480, 620)
    state = LayerState(pressure, temperature, 0.01 * pressure)
    assert _worst(lines, 500, 600, state, 2e21 * pressure / 1e5, "multigrid") < 1e-3


@pytest.mark.parametrize("shape", [
    {"default": LineTreatment(cutoff=None)},
    {"default": LineTreatment(cutoff=10.0, taper=0.5, subtract_cutoff=True)},
    {"radiation_term": False, "CO2": LineTreatment(far_wing=ChiPerrinHartmann())},
    {"H2O": LineTreatment(far_wing=SubLorentzianWater())},
    {"H2O": LineTreatment(cutoff=20.0, subtract_cutoff=True, far_wing=SubLorentzianWater())},
])
@pytest.mark.parametrize("method", ["tiered", "multigrid"])
def test_fast_methods_match_direct_for_each_line_treatment(shape, method):
    molecule = 1 if "H2O" in shape else 2
    lines = synthetic_lines(150, 560, 640, seed=3, molecule=molecule)
    state = LayerState(50000.0, 250.0, 20.0)
    assert _worst(lines, 580, 620, state, 1e21, method, treat(lines, **shape)) < 1e-3


@pytest.mark.parametrize("method", ["tiered", "multigrid"])
def test_co2_chi_lines_with_their_own_cutoff(method):
    # CO2 lines with the chi factor reaching 100 cm-1 among other lines cut at 25 cm-1 (the default treatment,
    # with a shorter CO2 reach to keep the test small): the fast methods match the direct sum within 0.1 %
    # (their required accuracy), the direct sum is the two kinds summed apart, and the CO2 wings beyond 25 cm-1
    # add absorption at points more than 25 cm-1 from every CO2 line.
    co2 = synthetic_lines(150, 500, 560, seed=4, molecule=2)
    h2o = synthetic_lines(150, 560, 640, seed=5, molecule=1)
    lines = LineList.concat([co2, h2o])
    state = LayerState(50000.0, 250.0, 20.0)
    chi = LineTreatment(cutoff=100.0, far_wing=ChiPerrinHartmann())
    assert _worst(lines, 590, 630, state, 1e21, method, treat(lines, CO2=chi)) < 1e-3
    x = _points(lines, 590, 630, state, "uniform")

    def direct(ll, co2_treatment=chi):
        return optical_depth(layer_lines(ll, state, 1e21, **treat(ll, CO2=co2_treatment)), x, method="direct")

    assert np.allclose(direct(lines), direct(co2) + direct(h2o), rtol=1e-12, atol=0)
    assert np.all(direct(co2) > 0)
    assert np.all(direct(co2, LineTreatment(far_wing=ChiPerrinHartmann())) == 0)


def test_tiered_matches_direct_on_real_water_lines(real_lines, tmp_path):
    import_lines([real_lines / "h2o_HITRAN.par"], tmp_path / "h2o.h5")
    with open_store(tmp_path / "h2o.h5") as st:
        lines = st.select(wavenumber_range=(150 - 25, 250 + 25))
    for p, t in [(90000.0, 288.0), (5000.0, 215.0)]:
        state = LayerState(p, t, 0.005 * p)
        for method in ("tiered", "multigrid"):
            assert _worst(lines, 150, 250, state, 1e21 * p / 1e5, method) < 1e-3, (p, method)


def _one_line(alpha, gamma, centre=1050.0):
    return LayerLines(np.array([centre]), np.array([1.0]), np.array([alpha]), np.array([gamma]), np.array([0]),
                      np.array([1.0]), np.array([0]), 250.0, False)


@pytest.mark.parametrize("alpha,gamma", [(1e-3, 1e-5), (1e-3, 1e-3), (1e-3, 0.02), (2e-3, 0.08)])
def test_a_smooth_line_keeps_its_area_and_its_wings(alpha, gamma):
    # A line below exact_tau keeps its area (the profile integrates to 1 within the cut-off,
    # less its tapered far wings) and its exact wings beyond the smoothed core; the direct sum of
    # the same line is the reference. The wing beyond 2.5 cm-1 (outside the window radius R, at
    # most 1.92 cm-1 for these widths) is compared with scipy's Voigt profile (an independent
    # implementation) to check the far-wing expansion (relative order (w / dnu)^6 < 1e-9 there).
    ll = _one_line(alpha, gamma)
    x = np.arange(1050.0 - 30, 1050.0 + 30, 2e-4)
    direct = optical_depth(ll, x, method="direct")
    smooth = optical_depth(ll, x, method="tiered", exact_tau=np.inf)
    assert smooth.sum() * 2e-4 == pytest.approx(direct.sum() * 2e-4, rel=2e-5)
    wing = (np.abs(x - 1050.0) > 2.5) & (np.abs(x - 1050.0) < 20.0)
    sigma = alpha / np.sqrt(2 * np.log(2))
    scipy_v = voigt_profile(x[wing] - 1050.0, sigma, gamma)
    assert np.max(np.abs(smooth[wing] - scipy_v) / scipy_v) < 1e-4


def test_smooth_lines_shift_little_absorption():
    # Weak lines (all of them smooth) against the exact treatment: the smoothing moves absorption
    # by a few hundredths of a wavenumber but keeps the total within 1e-4.
    lines = synthetic_lines(300, 480, 620, seed=5)
    state = LayerState(20000.0, 230.0, 10.0)
    ll = layer_lines(lines, state, 1e17)
    x = uniform_grid(500, 600, 0.002)
    exact = optical_depth(ll, x, exact_tau=0.0)
    smooth = optical_depth(ll, x, exact_tau=np.inf)
    assert smooth.sum() == pytest.approx(exact.sum(), rel=1e-4)


def test_single_lorentz_line_equivalent_width_ladenburg_reiche():
    # Ladenburg & Reiche (1913), Ann. Phys. 347, 181; Goody & Yung (1989), Atmospheric Radiation,
    # Eq. 4.37: a Lorentz line of intensity S, half-width gamma, absorber amount m has equivalent
    # width W = 2 pi gamma L(u), u = S m / (2 pi gamma), L(u) = u exp(-u) [I0(u) + I1(u)].
    s, gamma = 1e-20, 0.1
    lines = LineList({
        "molecule": np.array([1], np.uint8), "isotopologue": np.array([1], np.uint8),
        "wavenumber": np.array([1000.0]), "intensity": np.array([s]), "lower_energy": np.array([0.0]),
        "gamma_air": np.array([gamma]), "gamma_self": np.array([gamma]), "n_air": np.array([0.0]),
        "delta_air": np.array([0.0]),
    })
    state = LayerState(101325.0, 296.0, 0.0)  # gamma(p, T) = gamma exactly at 1 atm, 296 K
    half = 60.0
    grid = uniform_grid(1000 - half, 1000 + half, 0.002)
    sigma = cross_section(lines, grid, state, method="direct", treatments=(LineTreatment(cutoff=None),),
                          radiation_term=False)
    for u in (0.1, 1.0, 10.0):
        m = u * 2 * np.pi * gamma / s
        w_num = np.trapezoid(1 - np.exp(-sigma * m), grid)
        w_num += 2 * s * m * gamma / (np.pi * half)  # wings beyond the grid, weak-line limit
        w_lr = 2 * np.pi * gamma * u * (i0e(u) + i1e(u))  # i0e(u) = exp(-u) I0(u)
        # Tolerance 2e-4: the Doppler core (alpha_D ~ 1e-3 cm-1, y ~ 80) and the grid's finite span.
        assert w_num == pytest.approx(w_lr, rel=2e-4), u


def test_errors_are_clear():
    lines = synthetic_lines(5, 500, 510)
    with pytest.raises(SettingsError, match="needs a uniform grid"):
        cross_section(lines, np.array([500.0, 501.0, 503.0]), LayerState(1e5, 280.0), method="multigrid")
    with pytest.raises(SettingsError, match="strictly increasing"):
        cross_section(lines, np.array([500.0, 501.0, 500.5]), LayerState(1e5, 280.0))
    with pytest.raises(ValueError, match="temperature must lie in 100-400 K"):
        LayerState(1e5, 20.0)
    with pytest.raises(SettingsError, match="cutoff must be positive"):
        LineTreatment(cutoff=-1.0)
    with pytest.raises(SettingsError, match="taper must lie in"):
        LineTreatment(cutoff=5.0, taper=5.0)
    with pytest.raises(SettingsError, match="index into the 1 treatments"):
        layer_lines(lines, LayerState(1e5, 280.0), treatment=np.ones(len(lines), np.int64))


@pytest.mark.parametrize("subtract", [False, True])
def test_distant_co2_wings_on_the_coarse_grid_match_direct(subtract):
    # The tiered method puts the wings of lines reaching beyond 2 x 25 cm-1 (CO2 with the chi factor, 250 cm-1)
    # beyond 12.5 cm-1 on a coarse FFT grid (specforce.absorption._tiered, far_split). Measured: 2.3e-4 of the direct sum
    # at worst (as with one fine grid; a 0.25 cm-1 coarse grid gave 3.6e-4, the chi factor's kinks at 30 and
    # 120 cm-1); the bound is the required 0.1 %. Points 30-200 cm-1 from every line get nothing but those distant
    # wings, so dropping them fails this test.
    co2 = synthetic_lines(150, 500, 560, seed=4, molecule=2)
    state = LayerState(50000.0, 250.0, 20.0)
    shape = treat(co2, LineTreatment(subtract_cutoff=subtract),
                  CO2=LineTreatment(cutoff=250.0, subtract_cutoff=subtract, far_wing=ChiPerrinHartmann()))
    x = np.linspace(505.0, 760.0, 40001)
    ll = layer_lines(co2, state, 1e21, **shape)
    direct = optical_depth(ll, x, method="direct")
    fast = optical_depth(ll, x)
    window = direct > 1e-7  # the last 1 cm-1 before the cut-off fades to zero
    assert np.all(direct[(x > 590) & (x < 760)] > 0)
    assert np.max(np.abs(fast - direct)[window] / direct[window]) < 1e-3


# --- line treatments: the table the kernels read, the per-line index, and a plain-numpy reference ---


def test_treatment_table_and_per_line_index():
    # One row per treatment: effective cut-off (``full`` without one), taper (0 without a cut-off),
    # far-wing kind code and its parameters; each line keeps its treatment through the sort by centre.
    plain, chi, water = LineTreatment(), LineTreatment(250.0, far_wing=ChiPerrinHartmann()), \
        LineTreatment(cutoff=None, far_wing=SubLorentzianWater(onset_distance=12.0, rate=0.03))
    # the chi factor's parameters depend on temperature: no table without one
    with pytest.raises(SettingsError, match="at_temperature"):
        treatment_table((plain, chi, water), full=999.0)
    chi_280 = chi.at_temperature(280.0)
    table = treatment_table((plain, chi_280, water), full=999.0)
    assert table.shape == (3, 7)
    np.testing.assert_array_equal(table[0], [25.0, 1.0, 0, 0, 0, 0, 0])
    np.testing.assert_array_equal(table[1], [250.0, 1.0, 1, *chi_parameters_co2(280.0), 0])
    np.testing.assert_array_equal(table[2], [999.0, 0.0, 2, 12.0, 0.03, 0, 0])
    co2 = synthetic_lines(40, 500, 510, seed=1, molecule=2)
    h2o = synthetic_lines(40, 500, 510, seed=2, molecule=1)
    lines = LineList.concat([co2, h2o])
    ll = layer_lines(lines, LayerState(1e5, 280.0, 100.0), 1.0, **treat(lines, plain, CO2=chi, H2O=water))
    assert ll.treatments == (plain, chi_280, water)  # the layer's lines take the chi factor at its temperature
    cold = layer_lines(lines, LayerState(1e4, 200.0, 10.0), 1.0, **treat(lines, plain, CO2=chi, H2O=water))
    assert cold.treatments[1].far_wing.b == chi_parameters_co2(200.0) != chi_280.far_wing.b
    assert np.all(np.diff(ll.centre) >= 0)
    # the identity of each line is its row: its molecule decides its treatment
    np.testing.assert_array_equal(ll.treatment, np.where(lines.molecule[ll.ident] == 2, 1, 2))
    # merging sets with other treatment tuples renumbers the indices
    other = layer_lines(co2, LayerState(1e5, 280.0, 100.0), 1.0, treatments=(chi,), ident_offset=1000)
    merged = LayerLines.merge([ll, other])
    assert merged.treatments == (plain, chi_280, water)
    assert np.all(merged.treatment[merged.ident >= 1000] == 1)
    assert np.array_equal(np.sort(merged.treatment[merged.ident < 1000]), np.sort(ll.treatment))


def _reference_sum(x, ll, table):
    """Plain numpy: every line at every point within its cut-off, with its treatment's far-wing factor,
    pedestal and taper (the specforce Voigt profile, itself checked against scipy in test_lineshapes)."""
    out = np.zeros(x.size)
    for j in range(len(ll)):
        tr = ll.treatments[ll.treatment[j]]
        cut, taper = table[ll.treatment[j], 0], table[ll.treatment[j], 1]
        d = x - ll.centre[j]
        ad = np.abs(d)
        v = voigt_of_specforce(d, ll.doppler_hwhm[j], ll.lorentz_hwhm[j]) * tr.far_wing.factor(d)
        if tr.subtract_cutoff:
            v -= voigt_of_specforce(cut, ll.doppler_hwhm[j], ll.lorentz_hwhm[j]) * tr.far_wing.factor(cut)
        if taper > 0:
            u = np.clip((ad - (cut - taper)) / taper, 0.0, 1.0)
            v *= 1.0 - u**4 * (35.0 + u * (-84.0 + u * (70.0 - 20.0 * u)))
        out += ll.strength[j] * np.where(ad < cut, v, 0.0)
    return out


@pytest.mark.parametrize("subtract", [False, True])
def test_direct_kernel_matches_a_plain_numpy_reference_for_each_far_wing(subtract):
    # The compiled direct sum (specforce.absorption._kernels) against the plain-numpy sum above on the same
    # lines: CO2 lines with the Perrin & Hartmann chi factor (cut at 120 cm-1), water lines with the
    # sub-Lorentzian factor and the rest plain. Only the order of summation differs: 1e-12.
    co2 = synthetic_lines(30, 560, 600, seed=11, molecule=2)
    h2o = synthetic_lines(30, 580, 620, seed=12, molecule=1)
    o3 = synthetic_lines(30, 570, 610, seed=13, molecule=3)
    lines = LineList.concat([co2, h2o, o3])
    shape = treat(lines, LineTreatment(subtract_cutoff=subtract),
                  CO2=LineTreatment(120.0, subtract_cutoff=subtract, far_wing=ChiPerrinHartmann()),
                  H2O=LineTreatment(20.0, 0.5, subtract, SubLorentzianWater()), radiation_term=False)
    ll = layer_lines(lines, LayerState(30000.0, 240.0, 30.0), 1e20, **shape)
    x = np.linspace(520.0, 700.0, 9001)
    table = treatment_table(ll.treatments, full=1e9)
    ref = _reference_sum(x, ll, table)
    if not subtract:
        assert np.all(ref >= 0)
    direct = optical_depth(ll, x, method="direct")
    scale = np.max(np.abs(ref))
    np.testing.assert_allclose(direct, np.maximum(ref, 0.0), rtol=1e-12, atol=1e-13 * scale)
    # and both factors act: without them the wings differ by more than 10 %
    plain = [LineTreatment(t.cutoff, t.taper, t.subtract_cutoff) for t in ll.treatments]
    ll_plain = LayerLines(*(getattr(ll, f) for f in ("centre", "strength", "doppler_hwhm", "lorentz_hwhm",
                                                     "treatment", "peak_optical_depth", "ident")),
                          ll.temperature, False, tuple(plain))
    wings = ref > 1e-6 * scale
    assert np.max(np.abs(_reference_sum(x, ll_plain, table) - ref)[wings] / ref[wings]) > 0.1


def test_water_far_wing_factor_changes_the_far_wings_not_the_line_centre():
    # One water line: with the sub-Lorentzian treatment its profile is unchanged within the factor's
    # onset (10 cm-1) and reduced beyond it by exactly the factor, exp(-rate (|dnu| - onset)); the
    # default treatment leaves the Voigt wing as it is. Both within the default 25 cm-1 cut-off.
    line = synthetic_lines(1, 600, 600.001, seed=21, molecule=1)
    state = LayerState(50000.0, 260.0, 200.0)
    wing = SubLorentzianWater()
    x = np.linspace(570.0, 630.0, 6001)
    taus = {}
    for name, far in (("lorentz", FarWing()), ("sub", wing)):
        ll = layer_lines(line, state, 1e21, treatments=(LineTreatment(far_wing=far),), radiation_term=False)
        taus[name] = optical_depth(ll, x, method="direct"), optical_depth(ll, x, method="tiered")
    c = float(layer_lines(line, state).centre[0])
    d = np.abs(x - c)
    near, far = d <= wing.onset, (d > wing.onset + 0.5) & (d < 23.0)
    for k in (0, 1):  # direct, tiered
        lor, sub = taus["lorentz"][k], taus["sub"][k]
        np.testing.assert_allclose(sub[near], lor[near], rtol=1e-3 if k else 1e-15)
        assert np.all(sub[far] < lor[far])
    lor, sub = taus["lorentz"][0], taus["sub"][0]
    np.testing.assert_allclose(sub[far] / lor[far], np.exp(-wing.rate * (d[far] - wing.onset)), rtol=1e-12)


def test_one_table_of_several_gases_gives_the_lines_of_each_gas_exactly():
    # The column builds one wavenumber-sorted table of its gases, with each line's column and partial
    # pressure; its layer lines must equal those of each gas alone, merged, bit for bit (with float32 line
    # columns as in a line store: widths computed with an array of partial pressures would be promoted).
    def f32(ll):
        return LineList({k: (v.astype(np.float32) if k in ("gamma_air", "gamma_self", "n_air") else v)
                         for k, v in ll.columns.items()})

    co2, h2o = f32(synthetic_lines(60, 500, 520, seed=31, molecule=2)), f32(synthetic_lines(60, 500, 520, seed=32))
    state = LayerState(60000.0, 260.0)
    parts = [layer_lines(co2, LayerState(60000.0, 260.0, 24.0), 3e21, ident_offset=0),
             layer_lines(h2o, LayerState(60000.0, 260.0, 600.0), 5e22, ident_offset=60)]
    alone = LayerLines.merge(parts)
    both = LineList.concat([co2, h2o])
    order = np.argsort(np.concatenate([co2.wavenumber, h2o.wavenumber]), kind="stable")
    is_co2 = (np.arange(120) < 60)[order]
    together = layer_lines(both, state, np.where(is_co2, 3e21, 5e22), partial_pressure=np.where(is_co2, 24.0, 600.0),
                           ident=np.arange(120)[order])
    a, b = np.argsort(alone.ident), np.argsort(together.ident)
    for name in ("centre", "strength", "doppler_hwhm", "lorentz_hwhm", "peak_optical_depth", "ident"):
        np.testing.assert_array_equal(getattr(alone, name)[a], getattr(together, name)[b], err_msg=name)


@pytest.mark.parametrize("subtract", [False, True])
def test_outer_pieces_equal_the_pointwise_line_value(subtract):
    # Away from the centre (|x| + y >= 15) the line sums evaluate a line's points together, in real
    # arithmetic and with the vectorisable exp (specforce.absorption._outer_kernels); they must give
    # the pointwise kernel's values (the continued fraction in complex arithmetic, libm's exp) to
    # rounding: 1e-12, for each far-wing kind, with and without the inner window, Voigt and Lorentz.
    from specforce.absorption import _kernels as k
    from specforce.absorption._outer_kernels import outer_pieces

    treatments = (LineTreatment(25.0, 1.0, subtract),
                  LineTreatment(250.0, 1.0, subtract, ChiPerrinHartmann().at_temperature(240.0)),
                  LineTreatment(20.0, 0.5, subtract, SubLorentzianWater()))
    table = treatment_table(treatments, full=1e9)
    rng = np.random.default_rng(5)
    checked = 0
    for t in range(len(treatments)):
        for alpha, gamma in ((1e-3, 2e-3), (5e-4, 0.03), (5e-4, 0.08), (0.0, 0.07)):
            y = math.sqrt(math.log(2)) * gamma / alpha if alpha > 0 else math.inf
            lorentz = y > 100.0  # the kernels' Lorentz limit (LORENTZ_Y)
            r = 0.0 if lorentz else max(0.0, 15.0 - y) * alpha / math.sqrt(math.log(2))
            d = np.sort(np.concatenate([rng.uniform(r, 300.0, 400), -rng.uniform(r, 300.0, 400)]))
            sub = 1e-6 if subtract else 0.0
            for delta_k, delta_prev in ((400.0, 0.0), (400.0, 100.0), (40.0, 10.0)):
                out = np.zeros(d.size)
                work = [np.empty(d.size) for _ in range(2)] + [np.empty(d.size, np.int64)]
                outer_pieces(out, 0, d.size, d, 1.3, alpha, gamma, sub, t, table, lorentz, delta_k, delta_prev,
                             work[0], work[1], work[2], work[2].view(np.float64))
                ref = np.array([(k._window(abs(v), delta_k) - (k._window(abs(v), delta_prev) if delta_prev else 0.0))
                                * 1.3 * k.line_value(v, alpha, gamma, sub, t, table) for v in d])
                scale = np.max(np.abs(ref))
                if scale == 0.0:  # the inner window beyond the cut-off: nothing to compare
                    assert not np.any(out)
                    continue
                checked += 1
                np.testing.assert_allclose(out, ref, rtol=1e-12, atol=1e-14 * scale,
                                           err_msg=f"treatment {t}, widths {alpha}, {gamma}, windows {delta_k}, "
                                                   f"{delta_prev}")
    assert checked >= 20
