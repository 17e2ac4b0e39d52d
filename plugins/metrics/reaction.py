"""Reaction metrics from the entry's ``equation``: atom economy, yield, RME and its factors.

Plugin ``reaction``:

- ``masstrail_reaction_figures``: the equation parsed, balanced and matched to the entry's
  lines, once per entry (the yield check of the gap rules uses the same figures);
- ``masstrail_compute_metrics``: the figures as metrics, with Andraos' factorisation.

See :mod:`masstrail_plugins.metrics.equation` for the definitions and their sources. An
equation that does not balance gives no figures, and its imbalance is shown in the
result's ``context`` instead.
"""

from __future__ import annotations

from collections.abc import Callable

from capture.hookspecs import hookimpl
from capture.models import (
    Entry,
    MaterialInfo,
    MaterialLine,
    MetricsReport,
    ProductOut,
    ReactionFigures,
)
from masstrail_plugins.metrics.equation import andraos, reaction_figures

AUX_SOLVENT = {"solvent"}


def _r(x: float | None) -> float | None:
    return None if x is None else round(x, 4)


@hookimpl(trylast=True, specname="masstrail_reaction_figures")
def figures_from_equation(
    entry: Entry,
    materials: list[MaterialLine],
    product: ProductOut,
    resolve: Callable[[str], MaterialInfo | None],
) -> ReactionFigures | None:
    """The entry's equation worked out against its records; None without an equation."""
    if not entry.equation:
        return None
    try:
        return reaction_figures(entry.equation, materials, product, resolve)
    except ValueError as exc:  # EquationError, or a formula molmass cannot read
        return ReactionFigures(equation=entry.equation, error=str(exc))


@hookimpl(specname="masstrail_compute_metrics")
def reaction_metrics(
    materials: list[MaterialLine],
    product: ProductOut,
    recovered: list[MaterialLine],
    reaction: ReactionFigures | None,
) -> MetricsReport | None:
    """Atom economy, yield, RME, Andraos' SF and MRP, carbon efficiency, mass intensity."""
    weighed = [m for m in materials if m.mass_g is not None]
    out: dict[str, float | None] = {}
    p = product.mass_g
    if p:
        water = sum(m.water_g or 0.0 for m in weighed)
        out["mass_intensity"] = _r((sum(m.mass_g for m in weighed) - water) / p)
    if reaction is None:
        return MetricsReport(metrics=out)
    fig = reaction
    if fig.error is not None:
        return MetricsReport(metrics=out, context={"equation": f"no reaction metrics: {fig.error}"})
    out["atom_economy"] = _r(fig.atom_economy)
    out["theoretical_yield_g"] = _r(fig.theoretical_yield_g)
    out["yield"] = _r(fig.yield_)
    out["carbon_efficiency"] = _r(fig.carbon_efficiency)
    context = {
        "equation": f"balanced; desired product {fig.product_term} ({fig.product_formula}, "
        f"{fig.product_molar_mass:.2f} g/mol); limiting reagent {fig.limiting or 'not known'}"
    }
    if p and fig.reactant_mass_g:
        out["rme"] = _r(p / fig.reactant_mass_g)
    if p and fig.reactant_mass_g and fig.stoichiometric_mass_g and fig.yield_:
        sf = fig.reactant_mass_g / fig.stoichiometric_mass_g
        reactant_ids = {id(m) for m in materials if m.name in set(fig.reactants)}
        aux = sum(m.mass_g for m in weighed if id(m) not in reactant_ids)
        aux -= sum(r.mass_g for r in recovered if r.mass_g is not None)
        mrp, rme_global = andraos(fig.yield_, fig.atom_economy, sf, p, max(aux, 0.0))
        out["stoichiometric_factor"] = _r(sf)
        out["mrp"] = _r(mrp)
        out["rme_global"] = _r(rme_global)
        factors = {"yield": fig.yield_, "atom economy": fig.atom_economy,
                   "1/SF (excess reagent)": 1 / sf, "MRP (solvents, workup)": mrp}  # fmt: skip
        worst = min(factors, key=factors.get)
        context["rme_factors"] = (
            f"RME = yield {fig.yield_:.3f} × AE {fig.atom_economy:.3f} × 1/SF {1 / sf:.3f} × MRP "
            f"{mrp:.3f} = {fig.yield_ * fig.atom_economy / sf * mrp:.4f} (Andraos 2005); the "
            f"smallest factor, {worst}, costs the most"
        )
    return MetricsReport(metrics=out, context=context)
