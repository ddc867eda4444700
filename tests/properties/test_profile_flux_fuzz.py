"""Fuzzing profile columns and scenario files through to fluxes.

Each generated profile (columns with random unit mistakes: kPa or Pa under an hPa header,
degC as K, water in g/kg or as a fraction under a ppmv header, CO2 as a fraction, altitudes
1000 times off; the plausibility checks on or waived) and each scenario file on it (warming,
gas scaling) must end in a specforce domain error or in fluxes within the Planck bounds:

- 0 <= OLR and 0 <= surface downward flux;
- both at most pi times the Planck radiance of the warmest level or surface integrated over the
  computed range (Kirchhoff: no layer emits more than a black body at its temperature, and the
  surface emissivity is at most 1), and so at most sigma T_max^4.

Never an exception of another type. The spectral range is tiny (600-610 cm-1, H2O and CO2) to
keep each case well under a second.
"""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

import specforce
from specforce.constants import STEFAN_BOLTZMANN
from specforce.errors import SpecforceError
from specforce.radiation.humidity import saturation_vapour_pressure
from specforce.io.profiles import load_profile
from .test_input_fuzz import _strict
from specforce.radiation.transfer import planck

RANGE = (600.0, 610.0)
OPTIONS = dict(wavenumber_range=RANGE, gases=["H2O", "CO2"])
FEW = settings(max_examples=30, deadline=None, derandomize=True, database=None,
               suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])


@pytest.fixture(scope="module")
def spec():
    return specforce.spectroscopy()


@st.composite
def profile_text(draw):
    """A profile file in the plain-text format: mostly plausible, often with a unit mistake users make."""
    n = draw(st.integers(2, 7))
    mistake = lambda: draw(st.integers(0, 3)) == 3  # noqa: E731  (3, not 0: hypothesis favours small integers)
    p0 = draw(st.floats(400.0, 1050.0))
    if mistake():
        p0 = draw(st.sampled_from([p0 / 10, p0 * 100, 2000.0, 0.5]))  # kPa or Pa under an hPa header, ...
    ratios = draw(st.lists(st.floats(0.05, 0.9), min_size=n - 1, max_size=n - 1))
    p = p0 * np.concatenate([[1.0], np.cumprod(ratios)])
    t0 = draw(st.floats(200.0, 320.0))
    t = np.clip(t0 - 45.0 * np.log(p0 / p), draw(st.floats(150.0, 230.0)), 400.0)  # about 6.5 K/km in the troposphere
    rh = draw(st.floats(0.0, 1.0))
    q = rh * saturation_vapour_pressure(t) / (p * 100.0) * 1e6 + 3.0  # ppmv
    if mistake():
        t = t - 273.15  # degC under a K header
    if mistake():
        q = q * draw(st.sampled_from([1e-3, 1e3, 1e-6]))  # g/kg, per mille or a fraction instead of ppmv
    co2 = draw(st.sampled_from([400.0, 280.0, 4000.0, 0.0]))
    if mistake():
        co2 = draw(st.sampled_from([0.0004, 4e5, 0.4]))  # a fraction, or ppbv, under a ppmv header
    cols = {"pressure_hPa": p, "temperature_K": t, "H2O_ppmv": q, "CO2_ppmv": np.full(n, co2)}
    alt = draw(st.sampled_from(["none", "km"] + (["km_as_m", "m_as_km"] if mistake() else [])))
    if alt != "none":
        from specforce.radiation.atmosphere import hypsometric_altitude

        with np.errstate(all="ignore"):
            z = hypsometric_altitude(p * 100.0, np.maximum(t, 100.0)) / 1000.0  # km
        name = {"km": "altitude_km", "km_as_m": "altitude_m", "m_as_km": "altitude_km"}[alt]
        cols[name] = z * (1000.0 if alt == "m_as_km" else 1.0)
    names = list(cols)
    rows = [" ".join(f"{cols[c][i]:.6g}" for c in names) for i in range(n)]
    return " ".join(names) + "\n" + "\n".join(rows) + "\n"


def _t_max(prof):
    return max(float(np.max(prof.temperature)), float(prof.surface_temperature))


def _check_planck_bounds(result):
    """OLR and surface downward flux of one state within [0, pi * integral of B(T_max)] <= sigma T_max^4."""
    t_max = _t_max(result.profile)
    nu = np.linspace(*RANGE, 2001)
    b = planck(nu, t_max)
    band = math.pi * float(np.sum(0.5 * (b[1:] + b[:-1]) * np.diff(nu)))
    bound = band * (1 + 1e-6) + 1e-12  # trapezoid of a smooth, nearly linear B over 10 cm-1: error far below 1e-6
    assert band <= STEFAN_BOLTZMANN * t_max**4
    for name, value in (("OLR", result.olr), ("surface downward flux", result.surface_down)):
        assert math.isfinite(value), name
        assert 0.0 <= value <= bound, (name, value, bound, t_max)




@FEW
@given(text=profile_text(), accept=st.booleans())
def test_profile_columns_give_a_domain_error_or_fluxes_within_planck_bounds(tmp_path, spec, text, accept):
    path = tmp_path / "p.txt"
    path.write_text(text)
    ctx = _strict()
    try:
        prof = load_profile(str(path), accept_unusual=accept)
        result = specforce.olr(prof, spec, **OPTIONS)
    except SpecforceError as exc:
        event(f"domain error: {type(exc).__name__}")
        assert str(exc)
        return
    finally:
        ctx.__exit__(None, None, None)
    event("computed" + (" (checks waived)" if prof.checks_note else ""))
    _check_planck_bounds(result)


@st.composite
def scenario_text(draw):
    lines = ['name = "fuzz"', 'profile = "p.txt"']
    for _ in range(draw(st.integers(1, 3))):
        kind = draw(st.sampled_from(["warming", "surface_warming", "CO2", "H2O"]))
        lines.append("[[change]]")
        if kind in ("warming", "surface_warming"):
            lines.append(f"{kind} = {draw(st.floats(-30.0, 30.0)):.6g}")
            if draw(st.booleans()):
                lines.append("fixed_rh = true")
        else:
            lines.append(f'gas = "{kind}"')
            lines.append(f"scale = {draw(st.sampled_from([0.0, 0.5, 2.0, 8.0, 1000.0]))}")
    return "\n".join(lines) + "\n"


@FEW
@given(profile=profile_text(), scenario=scenario_text(), accept=st.booleans())
def test_scenario_files_give_a_domain_error_or_fluxes_within_planck_bounds(tmp_path, spec, profile, scenario, accept):
    (tmp_path / "p.txt").write_text(profile)
    path = tmp_path / "s.toml"
    path.write_text(scenario)
    ctx = _strict()
    try:
        result = specforce.radiative_forcing(scenario=str(path), spectroscopy=spec, accept_unusual=accept, **OPTIONS)
    except SpecforceError as exc:
        event(f"domain error: {type(exc).__name__}")
        assert str(exc)
        return
    finally:
        ctx.__exit__(None, None, None)
    event("computed")
    _check_planck_bounds(result.base)
    _check_planck_bounds(result.perturbed)
