"""Changes and scenario files: the grammar, conflicts, and what a change means in amounts."""

import numpy as np
import pytest

from specforce.errors import ScenarioError
from specforce.io.profiles import load_profile
from specforce.scenario import apply_perturbations, describe_changes, load_scenario, parse_change


def test_parse_change_and_errors():
    assert parse_change("co2", "2x").kind == "scale"
    p = parse_change("CH4", "722ppb:1866ppb")
    assert (p.kind, p.base, p.value) == ("ratio", pytest.approx(722e-9), pytest.approx(1866e-9))
    assert parse_change("CO2", "560ppm").value == pytest.approx(560e-6)
    with pytest.raises(ScenarioError, match="not an amount"):
        parse_change("CO2", "lots")
    with pytest.raises(ScenarioError, match="unknown gas"):
        parse_change("XX", "2x")


def test_scenario_file(tmp_path):
    good = tmp_path / "s.toml"
    good.write_text('name = "demo doubling"\nprofile = "demo"\ntropopause_hPa = 200\n'
                    '[[change]]\ngas = "CO2"\nscale = 2.0\n[[change]]\nwarming = 1.0\nfixed_rh = true\n')
    sc = load_scenario(good)
    assert sc.name == "demo doubling" and sc.tropopause_pressure == 20000.0
    base, pert = apply_perturbations(sc.profile, sc.perturbations)
    assert np.allclose(pert.vmr["CO2"], 2 * base.vmr["CO2"])
    assert np.allclose(pert.temperature - base.temperature, 1.0)
    bad = tmp_path / "b.toml"
    bad.write_text('profile = "demo"\ncolour = "red"\n')
    with pytest.raises(ScenarioError, match=r"unknown key\(s\) \['colour'\]"):
        load_scenario(bad)
    bad.write_text('profile = "demo"\n[[change]]\ngas = "CO2"\ntimes = 2\n')
    with pytest.raises(ScenarioError, match=r"change 1: unknown key\(s\) \['times'\]"):
        load_scenario(bad)


@pytest.mark.parametrize("body,message", [
    ('gas = "CO2"\nscale = 2.0\nset = "560ppm"', "exactly one of scale, set, or from and to; got scale and set"),
    ('gas = "CO2"\nscale = 2.0\nfrom = "280ppm"\nto = "560ppm"', "got scale and from/to"),
    ('gas = "CO2"\nfrom = "280ppm"', "give both from and to"),
    ('gas = "CO2"\nset = "2000000ppm"', "not a mixing ratio between 0 and 1"),
    ('gas = "XX"\nscale = 2', "unknown gas 'XX'"),
    ('warming = 1.0\nsurface_warming = 1.0', "warming or surface_warming, not both"),
    ('warming = 1.0\ngas = "CO2"', "cannot also change a gas"),
    ('gas = "CO2"\nscale = 2\nfixed_rh = true', "fixed_rh goes with a warming"),
    ('warming = "hot"', "is not a number of kelvin"),
])
def test_scenario_conflicts_are_errors(tmp_path, body, message):
    # Regression (issue 18): a change given two ways used to keep one of them silently.
    path = tmp_path / "s.toml"
    path.write_text(f'profile = "mls"\n[[change]]\n{body}\n')
    with pytest.raises(ScenarioError, match=message):
        load_scenario(path)


def test_describe_changes_gives_amounts():
    # The AFGL profiles carry 330 ppmv of CO2 at every level (Anderson et al. 1986), so "2x" means
    # 330 -> 660 ppm at the surface and as the column mean.
    prof = load_profile("mls")
    perts = [parse_change("CO2", "2x"), parse_change("CH4", "722ppb:1866ppb")]
    base, pert = apply_perturbations(prof, perts)
    co2, ch4 = describe_changes(base, pert, perts)
    assert (co2["base_surface"], co2["perturbed_surface"]) == (pytest.approx(330.0), pytest.approx(660.0))
    assert (co2["base_column_mean"], co2["perturbed_column_mean"]) == (pytest.approx(330.0), pytest.approx(660.0))
    assert co2["text"] == "CO2 330 -> 660 ppm at the surface, 330 -> 660 ppm column mean"
    assert ch4["unit"] == "ppb" and ch4["perturbed_surface"] == pytest.approx(1866.0)
    h2o = describe_changes(*apply_perturbations(prof, [parse_change("H2O", "1.2x")]), [parse_change("H2O", "1.2x")])[0]
    # precipitable water of the AFGL mid-latitude summer column: about 2.9 g cm-2 = 29 kg m-2
    # (Anderson et al. 1986; from memory, medium confidence)
    assert h2o["base_column_kg_m2"] == pytest.approx(29.0, rel=0.1)
    # 1.2x the mixing ratio is 1.2x the water within 0.2 %: a layer's moist-air column is its
    # pressure thickness over g times the moist molar mass, which falls as water is added
    assert h2o["perturbed_column_kg_m2"] == pytest.approx(1.2 * h2o["base_column_kg_m2"], rel=2e-3)


def test_changing_a_gas_the_profile_lacks_is_an_error():
    prof = load_profile("mls")
    bare = prof.copy(vmr={g: v for g, v in prof.vmr.items() if g != "CH4"})
    with pytest.raises(ScenarioError, match="has no CH4 to change"):
        apply_perturbations(bare, [parse_change("CH4", "2x")])


def test_a_legal_warming_past_the_temperature_range_says_where_why_and_how(tmp_path):
    # A warming of 30 K is allowed, but the AFGL mid-latitude summer profile reaches 380 K at 120 km
    # (Anderson et al. 1986) and specforce computes within 100-400 K: the message names the level, its
    # pressure, altitude and temperature, the limit and its basis, and the largest warming that works.
    path = tmp_path / "hot.toml"
    path.write_text('name = "hot"\nprofile = "mls"\n[[change]]\nwarming = 30\n')
    scen = load_scenario(path)
    with pytest.raises(ScenarioError, match=r"level 49 \(2\.27e-05 hPa, 120 km\) goes from 380 K to 410 K, beyond "
                                            r"400 K: specforce computes within 100-400 K, the temperatures its "
                                            r"spectroscopy is built for.*a warming of at most 20 K.*remove the "
                                            r"levels from 120 km up"):
        apply_perturbations(scen.profile, scen.perturbations)
    path.write_text('name = "hot"\nprofile = "mls"\n[[change]]\nwarming = 20\n')
    scen = load_scenario(path)
    _, pert = apply_perturbations(scen.profile, scen.perturbations)
    assert pert.temperature[-1] == pytest.approx(400.0)
