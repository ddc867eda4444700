"""Convergence report: how much a result moves when the numerics are made finer.

A line-by-line number is only as good as its spectral grid, its layers and its
angular quadrature. The report reruns a calculation three ways and gives the
change of each headline number:

``grid``
    the grid rule tightened: spacing fraction and grading halved and the
    significance threshold ``resolve_tau`` divided by ten (more lines resolved and
    treated exactly);
``layers``
    every layer split in two (``refine`` doubled);
``angles``
    two more Gauss-Legendre nodes in mu (with ``diffusivity``: the 3-node
    quadrature instead of the one-stream approximation).

The changes are estimates of the discretisation error of the baseline, not
bounds; the uncertainty of the spectroscopy is not part of them.
"""

from __future__ import annotations

from dataclasses import replace

from ..errors import SettingsError

__all__ = ["VARIANTS", "finer_settings", "convergence_report", "longwave_convergence", "forcing_convergence",
           "longwave_headline", "forcing_headline"]

#: What each variant changes, in words.
VARIANTS = {
    "grid": "grid rule tightened (spacing fraction and grading halved, resolve_tau / 10)",
    "layers": "layers doubled (refine x 2)",
    "angles": "two more angles (Gauss-Legendre nodes + 2)",
}


def finer_settings(settings):
    """The settings of each variant.

    Parameters
    ----------
    settings : Settings
        The baseline.

    Returns
    -------
    dict of str to Settings
        Keyed as :data:`VARIANTS`.
    """
    grid = replace(settings, spacing_fraction=settings.spacing_fraction / 2, grading=settings.grading / 2,
                   resolve_tau=settings.resolve_tau / 10,
                   spacing=None if settings.spacing is None else settings.spacing / 2)
    layers = replace(settings, refine=2 * settings.refine)
    if settings.diffusivity:
        angles = replace(settings, diffusivity=False, nodes=3)
    else:
        angles = replace(settings, nodes=settings.nodes + 2)
    return {"grid": grid, "layers": layers, "angles": angles}


def convergence_report(run, settings, baseline):
    """Rerun a calculation with finer numerics and report the changes.

    Parameters
    ----------
    run : callable
        ``run(settings)`` returns a dict of headline numbers (floats) for the given
        settings.
    settings : Settings
        The baseline settings.
    baseline : dict of str to float
        ``run(settings)``, already computed.

    Returns
    -------
    dict
        ``baseline``; per variant its ``description``, ``values`` and ``changes``
        (variant minus baseline); and ``largest_change`` per headline number (the
        largest absolute change over the variants, with its sign).
    """
    if getattr(settings, "spectral_model", "lbl") != "lbl":
        raise SettingsError("the convergence report reruns line-by-line with finer numerics; the fast model "
                            "(spectral_model 'kdist') reports its error against line-by-line with every result "
                            "instead: drop --convergence, or run line-by-line")
    variants = {}
    for name, finer in finer_settings(settings).items():
        values = run(finer)
        variants[name] = {"description": VARIANTS[name], "values": values,
                          "changes": {k: values[k] - baseline[k] for k in baseline}}
    largest = {}
    for k in baseline:
        changes = [v["changes"][k] for v in variants.values()]
        largest[k] = max(changes, key=abs)
    return {"baseline": dict(baseline), "variants": variants, "largest_change": largest,
            "note": "changes are estimates of the discretisation error, not bounds; spectroscopic uncertainty "
                    "is not included"}


def longwave_headline(result):
    """Headline numbers of a longwave result [W m-2]."""
    return {"olr_W_m2": result.olr, "surface_down_W_m2": result.surface_down}


def forcing_headline(result):
    """Headline numbers of a forcing result [W m-2] (instantaneous)."""
    return {"forcing_toa_W_m2": result.toa, "forcing_tropopause_W_m2": result.tropopause,
            "forcing_surface_W_m2": result.surface, "olr_base_W_m2": result.base.olr}


def longwave_convergence(profile, spectroscopy, settings, baseline_result):
    """:func:`convergence_report` of :func:`specforce.radiation.longwave.compute_longwave` for ``profile``."""
    from ..radiation.longwave import compute_longwave

    return convergence_report(lambda s: longwave_headline(compute_longwave(profile, spectroscopy, s)), settings,
                              longwave_headline(baseline_result))


def forcing_convergence(base, perturbed, spectroscopy, settings, baseline_result):
    """:func:`convergence_report` of the instantaneous forcing of ``base`` -> ``perturbed``.

    The tropopause stays at the baseline's pressure (refinement keeps every level of
    the profile, so it exists in every variant).
    """
    from .instantaneous import instantaneous_forcing

    trop = baseline_result.tropopause_pressure

    def run(s):
        return forcing_headline(instantaneous_forcing(base, perturbed, spectroscopy, s, tropopause=trop))

    return convergence_report(run, settings, forcing_headline(baseline_result))
