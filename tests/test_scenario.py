"""Changes and scenario files: the grammar, conflicts, and what a change means in amounts."""

import numpy as np
import pytest

from specforce.errors import ScenarioError
from specforce.io.profiles import load_profile
from specforce.forcing.scenario import apply_perturbations, describe_changes, load_scenario, parse_change


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
    ('warming = "hot"', "warming must be a number"),
    ('warming = 50.0', "is not a number of kelvin in -30..30"),
])
def test_scenario_conflicts_are_errors(tmp_path, body, message):
    # Required: a change given two ways is an error, never one of the two kept silently.
    path = tmp_path / "s.toml"
    path.write_text(f'profile = "mls"\n[[change]]\n{body}\n')
    with pytest.raises(ScenarioError, match=message):
        load_scenario(path)


@pytest.mark.parametrize("head,body,message", [
    # a TOML string is not a boolean: "no" must not be read as true
    ("", 'warming = 1.0\nfixed_rh = "no"', r"change 1: fixed_rh must be true or false .*got 'no', which is a string"),
    ("", 'warming = 1.0\nfixed_rh = 0', r"fixed_rh must be true or false .*got 0, which is a number"),
    ("", 'gas = "CO2"\nscale = "2"', r"change 1: scale must be a number \(e.g. scale = 2.0\), got '2'"),
    ("", 'gas = "CO2"\nscale = true', r"scale must be a number .*which is true or false"),
    ("", 'gas = "CO2"\nset = 0.00056', r"set must be a string \(e.g. set = \"560ppm\"\), got 0.00056"),
    ("", 'gas = "CO2"\nfrom = 280\nto = "560ppm"', r"from must be a string"),
    ("", 'gas = 2\nscale = 2.0', r"gas must be a string \(e.g. gas = \"CO2\"\)"),
    ("", 'warming = true', r"warming must be a number"),
    ("name = 3\n", 'gas = "CO2"\nscale = 2.0', r"s.toml: name must be a string"),
    ("surface_emissivity = \"0.9\"\n", 'gas = "CO2"\nscale = 2.0', r"s.toml: surface_emissivity must be a number"),
    ("tropopause_hPa = true\n", 'gas = "CO2"\nscale = 2.0', r"s.toml: tropopause_hPa must be a number"),
])
def test_scenario_values_must_have_their_toml_type(tmp_path, head, body, message):
    path = tmp_path / "s.toml"
    path.write_text(f'{head}profile = "mls"\n[[change]]\n{body}\n')
    with pytest.raises(ScenarioError, match=message):
        load_scenario(path)


def test_profile_must_be_a_string(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text('profile = 1\n[[change]]\ngas = "CO2"\nscale = 2.0\n')
    with pytest.raises(ScenarioError, match=r"s.toml: profile must be a string \(e.g. profile = \"mls\"\)"):
        load_scenario(path)


@pytest.mark.parametrize("body", ['profile = "mls"\n', 'profile = "mls"\nchange = []\n'])
def test_a_scenario_without_changes_is_an_error_with_a_toml_hint(tmp_path, body):
    path = tmp_path / "empty.toml"
    path.write_text(body)
    with pytest.raises(ScenarioError) as err:
        load_scenario(path)
    msg = str(err.value)
    assert msg.startswith(f"{path}: the scenario has no changes")
    assert '[[change]]\ngas = "CO2"\nscale = 2.0' in msg  # a hint in TOML syntax, valid as written
    hinted = tmp_path / "hinted.toml"
    hinted.write_text(body.replace("change = []\n", "") + msg.split("e.g.\n", 1)[1] + "\n")
    assert load_scenario(hinted).perturbations[0].value == 2.0


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
