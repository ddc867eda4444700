"""The states the fast model is trained and calibrated on: the six AFGL profiles (Anderson et
al. 1986), each as given or in a variant (warmed or cooled by 5 K with the water mixing ratio
kept, water halved or doubled), with CO2 284.32 ppm, CH4 1831.5 ppb and N2O 327.0 ppb (the
pre-industrial CO2 and the present-day CH4 and N2O of the forcing protocol, Pincus, Forster &
Stevens 2016, GMD 9, 3447), and their changes: CO2 0.5x, 2x, 4x and 8x; CH4 808.2 -> 1831.5
ppb; N2O 273.0 -> 327.0 ppb; water 1.2x. (The protocol holds CO2 at its present-day 397.55 ppm
for the CH4 and N2O cases; here it stays at 284.32 ppm, so that one base state serves every
change.)

The builder fits the tables to line-by-line on the states "as given"
(:mod:`specforce.kdist.fit`); the calibration (:mod:`specforce.forcing.calibration`) measures
the error on them and, in its full set, on the variants, which the fit does not see.
"""

from __future__ import annotations

__all__ = ["PROFILES", "BASE_AMOUNTS", "CHANGES", "TRAINING_CHANGES", "CALIBRATION_SETS", "calibration_states"]

#: The AFGL profiles of the set.
PROFILES = ("tropical", "mls", "mlw", "sas", "saw", "usstd")
#: Amounts of every base state [mol mol-1].
BASE_AMOUNTS = {"CO2": 284.32e-6, "CH4": 1831.5e-9, "N2O": 327.0e-9}
#: The changes: label -> (gas, base amount or None for the state's, perturbed amount or factor).
CHANGES = {
    "CO2 0.5x": ("CO2", None, 0.5), "CO2 2x": ("CO2", None, 2.0), "CO2 4x": ("CO2", None, 4.0),
    "CO2 8x": ("CO2", None, 8.0), "CH4 808.2->1831.5 ppb": ("CH4", 808.2e-9, 1.0),
    "N2O 273.0->327.0 ppb": ("N2O", 273.0e-9, 1.0), "H2O 1.2x": ("H2O", None, 1.2),
}
#: The fit's changes (:mod:`specforce.kdist.fit`): the calibration's, and CH4 and N2O doubled from
#: present day, so that the fit spans amounts above today's too (the calibration set stops at
#: present day; the benchmark's held-out CH4 case, 1831.5 -> 2500 ppb, lies between).
TRAINING_CHANGES = {**CHANGES, "CH4 1831.5->3663 ppb": ("CH4", None, 2.0), "N2O 327.0->654.0 ppb": ("N2O", None, 2.0)}
#: The sets: "quick" the six profiles as given; "full" with their four variants too.
CALIBRATION_SETS = {"quick": ("as given",), "full": ("as given", "+5 K", "-5 K", "H2O x0.5", "H2O x2")}


def _variant(profile, variant):
    if variant == "+5 K" or variant == "-5 K":
        dt = 5.0 if variant[0] == "+" else -5.0
        return profile.copy(temperature=profile.temperature + dt, surface_temperature=profile.surface_temperature + dt,
                            check_saturation=False, name=f"{profile.name} {variant}")
    if variant.startswith("H2O x"):  # doubled, the tropical surface air holds 151 % relative humidity
        vmr = {**profile.vmr, "H2O": profile.vmr["H2O"] * float(variant[5:])}
        return profile.copy(vmr=vmr, name=f"{profile.name} {variant}", check_saturation=False)
    return profile


def calibration_states(profile, variant="as given", changes=CHANGES):
    """The base state of ``profile`` (a Profile) in ``variant``, and its perturbed states by change
    (``changes``: label -> (gas, base amount or None for the state's, perturbed amount or factor)).

    Returns
    -------
    (Profile, dict of str to (Profile, Profile))
        The base, and per change label its (base, perturbed) pair.
    """
    base = _variant(profile, variant)
    for gas, x in BASE_AMOUNTS.items():
        if gas in base.vmr:
            base = base.with_vmr(gas, x)
    pairs = {}
    for label, (gas, before, factor) in changes.items():
        if gas not in base.vmr:
            continue
        if before is None:
            pairs[label] = (base, base.with_vmr(gas, base.vmr[gas] * factor))
        else:
            pairs[label] = (base.with_vmr(gas, before), base)
    return base, pairs
