"""The gas registry: one record per gas, read by every list of gases."""

import click
import numpy as np
import pytest
from click.testing import CliRunner

import specforce
from specforce.cli.common import change_options
from specforce.errors import MoleculeError
from specforce.forcing import formula_choice, formulas, scenario, sweep
from specforce.io import profiles as io_profiles
from specforce.io.results import profile_variables
from specforce.molecular import builtin, gases, molecules
from specforce.molecular.gases import Gas
from specforce.radiation import atmosphere
from specforce.radiation.atmosphere import Profile

# An invented record for a gas the bundled table lacks (SF6 is molecule 30 of the line record).
SF6 = Gas(formula="SF6", molecule_id=30, standard_name="mole_fraction_of_sulfur_hexafluoride_in_air", unit="ppb",
          switch="--sf6", switch_help="SF6 change: 2x or 0.01ppb.")


@pytest.fixture
def sf6():
    gases.register(SF6)
    try:
        yield SF6
    finally:
        gases.unregister("SF6")


def _profile_with(extra):
    base = specforce.load_profile("mls")
    return Profile(pressure=base.pressure, temperature=base.temperature, altitude=base.altitude,
                   vmr={**base.vmr, **extra}, name="mls+", accept_unusual=True)  # any amount will do here


# ------------------------------------------------------------------ the values of the old lists, kept exactly


def test_registry_keeps_every_value_the_modules_had():
    # the lists each module wrote out before the registry, verbatim
    assert tuple(atmosphere.GASES) == ("H2O", "CO2", "O3", "N2O", "CO", "CH4", "O2")
    assert molecules.DETAILED_MOLECULES == ("H2O", "CO2", "O3", "N2O", "CO", "CH4", "O2")
    assert dict(scenario.UNITS_OF_GASES) == {"CO2": ("ppm", 1e6), "CH4": ("ppb", 1e9), "N2O": ("ppb", 1e9),
                                             "O3": ("ppb", 1e9), "CO": ("ppb", 1e9), "H2O": ("ppmv", 1e6),
                                             "O2": ("%", 1e2)}
    assert list(sweep.SWEPT_GASES.items()) == [("CO2", ("ppm", 1e-6)), ("CH4", ("ppb", 1e-9)), ("N2O", ("ppb", 1e-9))]
    assert list(formulas.PREINDUSTRIAL.items()) == [("CO2", 278.0), ("CH4", 722.0), ("N2O", 270.0)]
    assert {g.formula: g.standard_name for g in gases.all_gases()} == {
        "H2O": "mole_fraction_of_water_vapor_in_air", "CO2": "mole_fraction_of_carbon_dioxide_in_air",
        "O3": "mole_fraction_of_ozone_in_air", "N2O": "mole_fraction_of_nitrous_oxide_in_air",
        "CO": "mole_fraction_of_carbon_monoxide_in_air", "CH4": "mole_fraction_of_methane_in_air",
        "O2": "mole_fraction_of_oxygen_in_air"}
    assert [(g.switch, g.formula) for g in gases.all_gases() if g.switch] == [
        ("--co2", "CO2"), ("--ch4", "CH4"), ("--n2o", "N2O"), ("--h2o", "H2O")]


def test_the_old_lists_are_views_of_the_registry():
    # no module keeps its own list: the public names read the registry, the private tables are gone
    assert isinstance(atmosphere.GASES, gases.GasNames)
    for table in (scenario.UNITS_OF_GASES, sweep.SWEPT_GASES, formulas.PREINDUSTRIAL):
        assert isinstance(table, gases.GasTable)
    from specforce.io import results

    assert not hasattr(results, "_GAS_STANDARD_NAMES")
    assert not hasattr(io_profiles, "_NC_GAS_STANDARD")


# ------------------------------------------------------------------ every gas has what the modules need


@pytest.mark.parametrize("record", gases.all_gases(), ids=lambda g: g.formula)
def test_every_gas_has_what_the_modules_need(record):
    g = record.formula
    # the line record numbers it as the registry says
    assert molecules.molecule_name(record.molecule_id) == g
    # a profile may carry it; results name it; a netCDF profile is read back by its standard name
    assert g in atmosphere.GASES
    prof = _profile_with({g: np.full(specforce.load_profile("mls").nlevels, 1e-7)})
    attrs = profile_variables(prof)[g][2]
    assert attrs["standard_name"] == record.standard_name and attrs["units"] == "1"
    assert io_profiles.netcdf_quantity("x", {"standard_name": record.standard_name}) == g
    # a change of it is described in its unit
    (d,) = scenario.describe_changes(*scenario.apply_perturbations(prof, [scenario.parse_change(g, "2x")]),
                                     [scenario.parse_change(g, "2x")])
    assert d["unit"] == record.unit
    assert d["base_surface"] == pytest.approx(1e-7 * record.per_mole_fraction, rel=1e-12)
    if record.sweepable:  # a sweep needs the published formulas and the pre-industrial background
        for f in formula_choice.FORMULAS:
            assert np.isfinite(formula_choice.formula_forcing(f, g, 1.2 * record.preindustrial, record.preindustrial))


def test_the_other_per_gas_tables_name_registry_gases():
    names = set(gases.GasNames())
    assert set(builtin.GENERATED_MOLECULES) <= names
    assert set(builtin.BUILTIN_ACCURACY) == set(builtin.GENERATED_MOLECULES)
    assert set(atmosphere.GAS_RANGES) <= names
    assert set(molecules.DETAILED_MOLECULES) <= names


def test_the_command_line_has_one_switch_per_registry_gas_with_one():
    from specforce.cli import main

    for cmd in (main.commands["forcing"], main.commands["batch"].commands["run"]):
        opts = {o for p in cmd.params for o in p.opts}
        assert {g.switch for g in gases.all_gases() if g.switch} <= opts, cmd.name


# ------------------------------------------------------------------ adding a gas


def test_an_added_gas_runs_through_a_profile_and_a_result_file(sf6):
    prof = _profile_with({"SF6": np.full(specforce.load_profile("mls").nlevels, 1e-11)})
    res = specforce.olr(prof, wavenumber_range=(600.0, 610.0), continuum=False)
    ds = res.to_dataset()
    assert ds["SF6"].attrs["standard_name"] == "mole_fraction_of_sulfur_hexafluoride_in_air"
    assert ds["SF6"].attrs["units"] == "1"
    np.testing.assert_array_equal(ds["SF6"].values, prof.vmr["SF6"])
    # a change of it is recorded in the registry's unit
    change = scenario.parse_change("SF6", "2x")
    (d,) = scenario.describe_changes(*scenario.apply_perturbations(prof, [change]), [change])
    assert d["unit"] == "ppb" and d["perturbed_surface"] == pytest.approx(0.02, rel=1e-12)
    # a switch is generated for it; the command gets its change with the others
    got = {}

    @click.command()
    @change_options
    def cmd(changes):
        got.update(changes)

    out = CliRunner().invoke(cmd, ["--sf6", "2x", "--co2", "560ppm"])
    assert out.exit_code == 0, out.output
    assert got == {"CO2": "560ppm", "SF6": "2x"}


def test_an_unregistered_gas_is_refused_and_registering_is_undone(sf6):
    gases.unregister("SF6")
    with pytest.raises(specforce.errors.ProfileError, match="unknown gas 'SF6'"):
        _profile_with({"SF6": 1e-11})
    gases.register(SF6)
    assert gases.GasNames(order="molecule_id")[-1] == "SF6"


def test_records_that_would_break_a_list_are_refused():
    with pytest.raises(MoleculeError, match="share the formula"):
        gases.register(gases.gas("CO2"))
    with pytest.raises(MoleculeError, match="share the standard_name"):
        gases.register(Gas("XX", 99, "mole_fraction_of_methane_in_air", "ppb"))
    with pytest.raises(MoleculeError, match="unit 'ppq'"):
        Gas("XX", 99, "mole_fraction_of_xx_in_air", "ppq")
    with pytest.raises(MoleculeError, match="pre-industrial"):
        Gas("XX", 99, "mole_fraction_of_xx_in_air", "ppb", sweepable=True)
    assert "XX" not in gases.GasNames()


def test_an_extra_table_loads_from_a_path(tmp_path):
    path = tmp_path / "extra.toml"
    path.write_text('[[gas]]\nformula = "SF6"\nmolecule_id = 30\n'
                    'standard_name = "mole_fraction_of_sulfur_hexafluoride_in_air"\nunit = "ppb"\n')
    (g,) = gases.load_gas_table(path)
    assert g == Gas("SF6", 30, "mole_fraction_of_sulfur_hexafluoride_in_air", "ppb")
