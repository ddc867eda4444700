"""The convergence report: variants of the numerics, and how results move."""

import json

import pytest
from click.testing import CliRunner

from specforce.io.profiles import load_profile
from specforce.molecular.builtin import builtin_spectroscopy
from specforce.cli import main
from specforce.forcing.convergence import VARIANTS, finer_settings, forcing_convergence
from specforce.forcing.instantaneous import instantaneous_forcing
from specforce.forcing.scenario import apply_perturbations, parse_change
from specforce.radiation.longwave import Settings


def test_finer_settings_change_one_thing_each():
    base = Settings(wavenumber_range=(600.0, 700.0))
    v = finer_settings(base)
    assert set(v) == set(VARIANTS)
    assert (v["grid"].spacing_fraction, v["grid"].grading, v["grid"].resolve_tau) == (0.25, 0.25, 1e-4)
    assert v["layers"].refine == 2 and v["angles"].nodes == 5
    assert v["layers"].nodes == base.nodes and v["angles"].refine == base.refine
    assert finer_settings(Settings(diffusivity=True))["angles"].diffusivity is False


@pytest.mark.slow  # a convergence report (a forcing per finer variant) and an independent run: ~35 s on 2 cores
def test_forcing_report_matches_independent_runs():
    # Each variant's values are those of a run made independently with the variant's settings,
    # and each change is that value minus the baseline: the report only arranges results.
    spec = builtin_spectroscopy()
    base, pert = apply_perturbations(load_profile("mls"), [parse_change("CO2", "2x")])
    s = Settings(wavenumber_range=(640.0, 700.0), continuum=False)
    r = instantaneous_forcing(base, pert, spec, s)
    rep = forcing_convergence(base, pert, spec, s, r)
    angles = instantaneous_forcing(base, pert, spec, Settings(wavenumber_range=(640.0, 700.0), continuum=False,
                                                              nodes=5), tropopause=r.tropopause_pressure)
    assert rep["variants"]["angles"]["values"]["forcing_toa_W_m2"] == pytest.approx(angles.toa, rel=1e-12)
    for v in rep["variants"].values():
        for k, x in v["changes"].items():
            assert x == pytest.approx(v["values"][k] - rep["baseline"][k], abs=1e-12)
    # refined layers move the CO2 band-centre forcing by well under 1 % of its value (measured 0.2 %)
    assert abs(rep["variants"]["layers"]["changes"]["forcing_tropopause_W_m2"]) < 0.01 * abs(r.tropopause)


def test_cli_reports_convergence_in_json():
    out = CliRunner().invoke(main, ["olr", "--profile", "mls", "--range", "660", "670", "--no-continuum",
                                    "--convergence", "--json"])
    assert out.exit_code == 0, out.output
    rep = json.loads(out.output)["convergence"]
    assert set(rep["variants"]) == set(VARIANTS) and "olr_W_m2" in rep["largest_change"]
